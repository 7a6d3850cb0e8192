/** `gapwatch train`: one training run watched by the monitor, indexed, with an optional HTML report. */
import { indexRun } from "../store/index-db.js";
import type { RunResult } from "../run/schema.js";
import type { TrainConfigInput } from "../run/schema.js";
import { resolveTrainConfig, runTraining, type Progress } from "../train/run.js";
import { planRun, readPlan } from "../batch/sweep-plan.js";
import { InputError } from "../errors.js";
import { writeReport } from "../report/write.js";

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

/** Train; `doc` is what `train --json` prints, `result` the whole run, `report` the HTML file or null. */
export async function runTrainCommand(cfg: TrainCommandConfig) {
  const result = await runTraining(cfg.input, { runsDir: cfg.runsDir, signal: cfg.signal, onProgress: cfg.onProgress, maxStates: cfg.maxStates });
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
