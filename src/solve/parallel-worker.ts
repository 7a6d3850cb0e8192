/**
 * Entry of one sweep thread of parallel.ts: receives its `SweepJob` in workerData (shared V buffers,
 * tables, barrier), reports `{ ready: true }`, runs `sweepLoop` over its range of states and ends.
 * On any failure it marks the solve aborted so that no other thread waits for it forever.
 */
import { parentPort, workerData } from "node:worker_threads";
import { abortSweeps, sweepLoop, SweepAborted, type SweepJob } from "./parallel.js";

const port = parentPort;
if (!port) throw new Error("parallel-worker.ts runs only as a worker thread");
const job = (workerData as { job: SweepJob }).job;
try {
  port.postMessage({ ready: true });
  sweepLoop(job);
} catch (err) {
  abortSweeps(job.ctrl);
  if (!(err instanceof SweepAborted)) throw err;
}
