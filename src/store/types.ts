/**
 * What a finished (or interrupted) run leaves behind, as plain data. `RunResult` is the one shape
 * that the CLI, batch comparison and the HTML report read; `readRun` (run-store.ts) rebuilds it
 * from a run directory. No typed arrays, no functions: JSON-safe throughout.
 */
import type { Alert, CheckpointRecord, Verdict } from "../monitor/monitor.js";
import type { TrainConfig } from "../train/config.js";

export type RunStatus = "complete" | "interrupted" | "failed";

/** manifest.json */
export interface RunManifest {
  format: "gapwatch-run/1";
  runId: string;
  /** The fully resolved config (the run id hashes its canonical JSON). */
  config: TrainConfig;
  /** Seeds of the derived random streams, for replay. */
  seeds: { exploration: string; environment: string; evaluation: string };
  /** Checkpoint interval in steps. */
  checkpointEvery: number;
  /** Model facts, for readers that do not reload the environment. */
  model: { name: string; states: number; actions: number; gamma: number; horizon: number };
  /** Normalization references: expected discounted returns from the start distribution. */
  references: ScoreReferencesDoc;
  packageVersion: string;
  nodeVersion: string;
  /** ISO time the run started (the only clock value in the run directory besides summary timings). */
  createdAt: string;
}

export interface ScoreReferencesDoc {
  designerOptimal: number;
  designerRandom: number;
  intentOptimal: number;
  intentRandom: number;
}

/** summary.json */
export interface RunSummary {
  format: "gapwatch-run-summary/1";
  runId: string;
  status: RunStatus;
  verdict: Verdict;
  reason: string;
  /** Scores at the last checkpoint (null when none was recorded). */
  final: CheckpointRecord | null;
  alertCount: number;
  /** Step of the first alert of a deciding kind when decoupled, else of the first alert; null if none. */
  firstAlertStep: number | null;
  /** Steps and episodes actually run. */
  steps: number;
  episodes: number;
  checkpointCount: number;
  /** Wall-clock seconds of training and of monitoring (evaluation + detectors). */
  trainSeconds: number;
  monitorSeconds: number;
  /** Present when status is "failed". */
  error?: string;
  finishedAt: string;
}

/** Everything about one run, as batch comparison and reports read it. */
export interface RunResult {
  runId: string;
  runDir: string;
  config: TrainConfig;
  status: RunStatus;
  verdict: Verdict;
  reason: string;
  checkpoints: CheckpointRecord[];
  alerts: Alert[];
  final: CheckpointRecord | null;
  firstAlertStep: number | null;
  references: ScoreReferencesDoc;
  steps: number;
  episodes: number;
  trainSeconds: number;
  monitorSeconds: number;
}
