/** `gapwatch train`: one training run watched by the monitor, indexed, with an optional HTML report. */
import { isModuleSpec } from "../env/index.js";
import { EXIT, GapwatchError, InputError } from "../errors.js";
import { indexRun } from "../store/index-db.js";
import { writeJsonAtomic } from "../store/atomic.js";
import { commitRunDir, readRun, RUN_FILES } from "../store/run-store.js";
import type { RunResult, RunSummary } from "../run/schema.js";
import type { TrainConfigInput } from "../run/schema.js";
import { resolveTrainConfig, runTraining, type Progress } from "../train/run.js";
import { planRun, readPlan } from "../batch/sweep-plan.js";
import { writeReport } from "../report/write.js";
import { startWorker } from "../util/worker.js";
import { dirname, join } from "node:path";

export interface TrainCommandConfig {
  input: TrainConfigInput;
  /** Root of the run directories. */
  runsDir: string;
  /** Also write the run's HTML report: true for `<run-dir>/report.html`, or a file. */
  report?: boolean | string;
  /** State bound when `env` is a simulator module. */
  maxStates?: number;
  /** Set `aborted` to stop; the run is stored as "interrupted". */
  signal?: { readonly aborted: boolean };
  onProgress?: (p: Progress) => void;
  /** Do not record the run in `<runsDir>/index.db` (the SQLite file is never opened). */
  noIndex?: boolean;
}

/** The JSON document of `gapwatch train`. */
export function trainDocument(r: RunResult) {
  return {
    runDir: r.runDir,
    env: r.config.env,
    reward: r.config.reward,
    learner: r.config.learner,
    seed: r.config.seed,
    verdict: r.verdict,
    status: r.status,
    reason: r.reason,
    checkpoints: r.checkpoints.map((c) => ({ step: c.step, designer: c.designer, intent: c.intent, designerNorm: c.designerNorm, intentNorm: c.intentNorm })),
    alerts: r.alerts.map((a) => ({ step: a.step, kind: a.kind, message: a.message })),
  };
}

/** How long a run on a module gets to stop by itself after an interrupt before its thread is ended (ms). */
export const INTERRUPT_GRACE_MS = 1000;
const SIGNAL_POLL_MS = 50;

/**
 * After the training thread was ended mid-step: the run directory holds the manifest and the
 * checkpoints so far; write its summary as interrupted and read the run back.
 */
function storeInterrupted(runDir: string): RunResult {
  const r = readRun(runDir);
  const reason = `interrupted at step ${r.steps} of ${r.config.steps}: the module did not return from its code within ${INTERRUPT_GRACE_MS / 1000} s of the interrupt, so its training thread was ended`;
  const summary: RunSummary = {
    format: "gapwatch-run-summary/1",
    runId: r.runId,
    status: "interrupted",
    verdict: r.verdict,
    reason,
    final: r.final,
    alertCount: r.alerts.length,
    firstAlertStep: r.firstAlertStep,
    steps: r.steps,
    episodes: r.episodes,
    checkpointCount: r.checkpoints.length,
    trainSeconds: 0,
    monitorSeconds: 0,
    finishedAt: new Date().toISOString(),
  };
  writeJsonAtomic(join(runDir, RUN_FILES.summary), summary);
  // The thread wrote into its private temporary folder; move the run into place as the run would have.
  const finalDir = commitRunDir(dirname(runDir), r.runId, runDir);
  return { ...r, runDir: finalDir, status: "interrupted", reason };
}

/**
 * `runTraining` in a worker thread, for simulator modules: user code can loop forever inside one step
 * (or while the module loads), where no signal is ever read. On interrupt the thread is asked to stop;
 * if it has not finished INTERRUPT_GRACE_MS later it is terminated and the run stored as interrupted
 * (or, when no run had started yet, the command fails with `train.interrupted`, exit 130).
 */
export function trainInWorker(cfg: Pick<TrainCommandConfig, "input" | "runsDir" | "maxStates" | "signal" | "onProgress">): Promise<RunResult> {
  return new Promise<RunResult>((resolve, reject) => {
    const worker = startWorker(import.meta.url, "train-worker", { input: cfg.input, runsDir: cfg.runsDir, maxStates: cfg.maxStates });
    let runDir: string | null = null;
    let settled = false;
    let killTimer: NodeJS.Timeout | undefined;
    const finish = (fn: () => void) => {
      if (settled) return;
      settled = true;
      clearInterval(poll);
      clearTimeout(killTimer);
      void worker.terminate();
      try {
        fn();
      } catch (e) {
        reject(e);
      }
    };
    const kill = () =>
      finish(() => {
        if (runDir) return resolve(storeInterrupted(runDir));
        reject(new GapwatchError("train.interrupted", "interrupted while the simulator module was loading (its code did not return); no run was stored", { where: cfg.input.env, exitCode: EXIT.interrupted }));
      });
    const poll = setInterval(() => {
      if (!cfg.signal?.aborted || killTimer) return;
      worker.postMessage({ type: "abort" });
      killTimer = setTimeout(kill, INTERRUPT_GRACE_MS);
    }, SIGNAL_POLL_MS);
    type Reply =
      | { type: "start"; runDir: string }
      | { type: "progress"; p: Progress }
      | { type: "done"; result: RunResult }
      | { type: "error"; error: { code: string; message: string; where?: string; exitCode?: number } };
    worker.on("message", (m: Reply) => {
      if (m.type === "start") runDir = m.runDir;
      else if (m.type === "progress") cfg.onProgress?.(m.p);
      else if (m.type === "done") finish(() => resolve(m.result));
      else {
        const { code, message, where, exitCode } = m.error;
        finish(() => reject(exitCode === EXIT.badInput ? new InputError(code, message, where) : new GapwatchError(code, message, { where, exitCode })));
      }
    });
    worker.on("error", (e) => finish(() => reject(e)));
    worker.on("exit", (code) => finish(() => reject(new GapwatchError("train.failed", `the training thread exited early (code ${code})`))));
  });
}

/**
 * Train; `doc` is what `train --json` prints, `result` the whole run, `report` the HTML file or null.
 * A run on a simulator module trains in a worker thread (see `trainInWorker`).
 */
export async function runTrainCommand(cfg: TrainCommandConfig) {
  const result = cfg.input.env !== undefined && isModuleSpec(cfg.input.env)
    ? await trainInWorker(cfg)
    : await runTraining(cfg.input, { runsDir: cfg.runsDir, signal: cfg.signal, onProgress: cfg.onProgress, maxStates: cfg.maxStates });
  if (!cfg.noIndex) indexRun(cfg.runsDir, result);
  const report = cfg.report ? await writeReport(result.runDir, { out: typeof cfg.report === "string" ? cfg.report : undefined }) : null;
  return { result, report, doc: report ? { ...trainDocument(result), report } : trainDocument(result) };
}

export interface PlanTaskConfig {
  /** The plan file written by `compare --plan`. */
  plan: string;
  /** Which run of the plan (0-based). */
  index: number;
  runsDir: string;
  signal?: { readonly aborted: boolean };
  onProgress?: (p: Progress) => void;
}

/**
 * Run one run of a plan into the runs folder (an array-job task): no index writes. Refused (exit 2)
 * when the run's inputs changed since the plan was written (its run id would differ).
 */
export async function runPlanTask(cfg: PlanTaskConfig) {
  const plan = readPlan(cfg.plan);
  const run = planRun(plan, cfg.index);
  const { runId } = await resolveTrainConfig(run.input, { maxStates: plan.sweep.maxStates });
  if (runId !== run.runId) {
    throw new InputError("plan.stale", `run ${run.index} would now be ${runId}, not the plan's ${run.runId}: an input changed since the plan was written; write the plan again`, cfg.plan);
  }
  const result = await runTraining(run.input, { runsDir: cfg.runsDir, signal: cfg.signal, onProgress: cfg.onProgress, maxStates: plan.sweep.maxStates });
  return { result, report: null, doc: { index: run.index, runId: result.runId, ...trainDocument(result) } };
}
