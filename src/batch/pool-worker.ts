/**
 * Entry of one pool thread (see pool.ts). Receives `{ id, kind, job, runsDir }`, runs the job
 * synchronously with `runTraining`, and answers `{ id, ok, value }` or `{ id, ok: false, error }`.
 * One job at a time per thread; built-in scenarios are compiled once per thread and reused.
 */
import { parentPort } from "node:worker_threads";
import { executeLocal, executeRemote, failureOf } from "./execute.js";
import type { PoolRequest, PoolReply } from "./pool.js";

const port = parentPort;
if (!port) throw new Error("pool-worker.ts runs only as a worker thread");
port.on("message", async (msg: PoolRequest) => {
  let reply: PoolReply;
  try {
    const value = msg.kind === "local" ? await executeLocal(msg.job, msg.runsDir as string) : await executeRemote(msg.job);
    reply = { id: msg.id, ok: true, value };
  } catch (err) {
    reply = { id: msg.id, ok: false, error: failureOf(err) };
  }
  port.postMessage(reply);
});
port.postMessage({ ready: true });
