/**
 * Entry of the thread that reads a simulator module's reward variant names for compare's pre-check
 * (variant-names.ts): imports the module, answers `{ ok, names }` or `{ ok: false, error }`.
 */
import { parentPort, workerData } from "node:worker_threads";
import { moduleVariantNames } from "../env/index.js";
import { failureOf } from "./execute.js";

const port = parentPort;
if (!port) throw new Error("variant-names-worker.ts runs only as a worker thread");
const { file } = workerData as { file: string };
moduleVariantNames(file).then(
  (names) => port.postMessage({ ok: true, names }),
  (err: unknown) => port.postMessage({ ok: false, error: failureOf(err) }),
);
