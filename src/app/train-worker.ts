/**
 * Worker-thread entry of `gapwatch train` on a simulator module (see train.ts `trainInWorker`): runs
 * `runTraining` with the config in workerData and reports to the parent: `start` (run directory made),
 * `progress` (each checkpoint), then `done` (the RunResult) or `error`. The parent's `abort` message sets
 * the run's signal; a module whose step never returns keeps that from being read, so the parent
 * terminates the thread after a grace period instead.
 */
import { parentPort, workerData } from "node:worker_threads";
import { GapwatchError } from "../errors.js";
import type { TrainConfigInput } from "../run/schema.js";
import { runTraining } from "../train/run.js";

const port = parentPort!;
const data = workerData as { input: TrainConfigInput; runsDir: string; maxStates?: number };
const signal = { aborted: false };
port.on("message", (m: { type?: string }) => {
  if (m?.type === "abort") signal.aborted = true;
});
runTraining(data.input, {
  runsDir: data.runsDir,
  maxStates: data.maxStates,
  signal,
  onStart: (run) => port.postMessage({ type: "start", ...run }),
  onProgress: (p) => port.postMessage({ type: "progress", p }),
})
  .then((result) => port.postMessage({ type: "done", result }))
  .catch((e: unknown) => {
    const g = e instanceof GapwatchError ? e : null;
    port.postMessage({ type: "error", error: { code: g?.code ?? "train.failed", message: e instanceof Error ? e.message : String(e), where: g?.where, exitCode: g?.exitCode } });
  });
