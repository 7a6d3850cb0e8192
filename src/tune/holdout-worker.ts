/**
 * Entry of one held-out evaluation thread of parallel.ts: loads its share of the layouts itself (by
 * env spec, so no model crosses threads), solves each exactly and posts the regretNorms, or the
 * first error as {code, message, where}.
 */
import { parentPort, workerData } from "node:worker_threads";
import { loadFinite, withLayout } from "../env/index.js";
import { GapwatchError } from "../errors.js";
import { layoutRegret } from "./search.js";

const port = parentPort;
if (!port) throw new Error("holdout-worker.ts runs only as a worker thread");
const job = workerData as { env: string; layouts: number[]; weights: Record<string, number>; maxStates?: number };
(async () => {
  const out: number[] = [];
  for (const n of job.layouts) out.push(layoutRegret((await loadFinite(withLayout(job.env, n), { command: "retune", maxStates: job.maxStates })).model, job.weights));
  port.postMessage({ ok: true, regretNorms: out });
})().catch((e: unknown) => {
  const err = e instanceof GapwatchError ? { code: e.code, message: e.message, where: e.where } : { code: "internal", message: String((e as Error)?.message ?? e) };
  port.postMessage({ ok: false, error: err });
});
