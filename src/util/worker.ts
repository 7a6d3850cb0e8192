/**
 * Starting a worker thread whose entry module sits next to the caller, from the build and from
 * source alike: from the build (dist/*.js) the thread loads `<entry>.js` directly; from source (.ts:
 * tests and `tsx`) it boots through tsx's `tsImport`, so the same code runs in both without a build
 * step. Used by the batch pool (src/batch/pool.ts) and the parallel sweeps (src/solve/parallel.ts).
 */
import { createRequire } from "node:module";
import { fileURLToPath, pathToFileURL } from "node:url";
import { Worker } from "node:worker_threads";

const BOOT = `
const { workerData } = require("node:worker_threads");
import(workerData.tsxApi).then((m) => m.tsImport(workerData.entry, workerData.entry)).catch((e) => { setImmediate(() => { throw e; }); });
`;

/**
 * A Worker running the module `entry` (base name without extension) in the folder of `callerUrl`
 * (the caller's `import.meta.url`). `data` is passed as the thread's workerData (the tsx boot adds
 * its own `entry` and `tsxApi` keys beside it).
 */
export function startWorker(callerUrl: string, entry: string, data?: Record<string, unknown>): Worker {
  if (fileURLToPath(callerUrl).endsWith(".js")) return new Worker(new URL(`./${entry}.js`, callerUrl), data ? { workerData: data } : undefined);
  const entryUrl = new URL(`./${entry}.ts`, callerUrl).href;
  const tsxApi = pathToFileURL(createRequire(callerUrl).resolve("tsx/esm/api")).href.replace(/\.cjs$/, ".mjs");
  return new Worker(BOOT, { eval: true, workerData: { entry: entryUrl, tsxApi, ...data } });
}
