/** `gapwatch train`: one training run watched by the monitor, indexed, with an optional HTML report. */
import { indexRun } from "../store/index-db.js";
import type { RunResult } from "../run/schema.js";
import type { TrainConfigInput } from "../run/schema.js";
import { runTraining, type Progress } from "../train/run.js";
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
  indexRun(cfg.runsDir, result);
  const report = cfg.report ? await writeReport(result.runDir, { out: typeof cfg.report === "string" ? cfg.report : undefined }) : null;
  return { result, report, doc: report ? { ...trainDocument(result), report } : trainDocument(result) };
}
