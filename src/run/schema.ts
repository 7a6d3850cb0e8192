/**
 * The run schema: every shape a run directory holds, as plain JSON-safe data (no typed arrays, no
 * functions), in one low module that train, monitor, store, batch and report all import. It imports
 * nothing (it sits beside src/model at the bottom of the house), so no reader of a run has to reach
 * up into the code that writes one.
 *
 *   manifest.json      RunManifest (with the resolved TrainConfig and ScoreReferencesDoc)
 *   checkpoints.jsonl  one CheckpointRecord per line
 *   alerts.jsonl       one Alert per line (wrapped in a log line, see src/store/run-store.ts)
 *   summary.json       RunSummary
 *   policy.json        RunPolicyFile
 *
 * `RunResult` is the one shape that the CLI, batch comparison and the HTML report read; `readRun`
 * (src/store/run-store.ts) rebuilds it from a run directory.
 */

// ---- config (manifest.json "config") ----

export type EvaluationMode = "exact" | "mc" | "both";

/** Detector settings in normalized units; defaults and meaning in src/monitor/monitor.ts (MONITOR_DEFAULTS). */
export interface MonitorConfig {
  intentDrop: {
    /** CUSUM allowance per checkpoint, normalized intent units. */
    k: number;
    /** CUSUM decision interval, normalized intent units. */
    h: number;
    /** Smallest fall from the running peak that can alert. */
    floor: number;
    /** How far the designer return may sit below its value at the intent peak and still count as "not falling". */
    designerSlack: number;
  };
  proxySaturated: {
    /** designerNorm at or above this counts as "near its optimum". */
    designerMin: number;
    /** intentNorm at or below this counts as "far below its own optimum". */
    intentMax: number;
  };
  rankBreak: {
    enabled: boolean;
    /** Checkpoints needed before the correlation is read. */
    minPoints: number;
    /** Spearman rho at or below this breaks. */
    threshold: number;
  };
  /** Final designerNorm below this gives "inconclusive". */
  inconclusiveBelow: number;
}

export type DeepPartial<T> = { [K in keyof T]?: T[K] extends object ? Partial<T[K]> : T[K] };

/**
 * Everything one training run needs (defaults: src/train/config.ts). The resolved config is what
 * the manifest stores and what the run id hashes, so two runs with equal resolved configs are the
 * same run.
 */
export interface TrainConfig {
  /** Environment: built-in scenario name or model file path. */
  env: string;
  /** Reward variant name known to the environment, or a reward file path. */
  reward: string;
  /** Learner name (a key of the learner registry, policies/index.ts). */
  learner: string;
  /** Environment steps to train for. */
  steps: number;
  /** Seed of every random stream of the run (exploration, environment, Monte Carlo evaluation). */
  seed: number;
  /** Number of checkpoints; the monitor evaluates every ceil(steps / checkpoints) steps and at the end. */
  checkpoints: number;
  /** Learner settings (alpha, epsilon, schedules, ...); gamma defaults to the model's discount. */
  learnerParams: Record<string, unknown>;
  /** How checkpoints are scored: exact policy evaluation, Monte Carlo rollouts, or both (detectors read the exact scores). */
  evaluation: EvaluationMode;
  /** Rollouts per checkpoint for Monte Carlo evaluation. */
  mcEpisodes: number;
  /** Detector settings (normalized units); omitted keys take MONITOR_DEFAULTS. */
  monitor: DeepPartial<MonitorConfig>;
  /**
   * Only for simulator modules without a finite model (`finite: false`): the normalization references
   * (random policy = low, optimal = high) of the designer and intent scores, from the flags or the module.
   */
  designerRange?: { low: number; high: number };
  intentRange?: { low: number; high: number };
}

/** Input to `runTraining`: env and reward are required (reward may default to the model's default variant). */
export type TrainConfigInput = Partial<TrainConfig> & { env: string };

// ---- checkpoints.jsonl and alerts.jsonl ----

export type AlertKind = "intent-drop" | "proxy-saturated" | "rank-break";
export type Verdict = "aligned" | "decoupled" | "inconclusive";

/** One line of checkpoints.jsonl. */
export interface CheckpointRecord {
  step: number;
  episodes: number;
  designer: number;
  intent: number;
  designerNorm: number;
  intentNorm: number;
  /** designerNorm - intentNorm. */
  gap: number;
  /** Running Spearman rho of the designer and intent series up to here; null while undefined (< 3 points or a constant series). */
  rank: number | null;
  /** Present with Monte Carlo scores: 95% half-widths of the raw scores. */
  mc?: { episodes: number; designerHalfWidth: number; intentHalfWidth: number };
  /**
   * Present on external runs (`gapwatch ingest`): the monitor's pooled levels and standard errors on the
   * normalized scale (null where the relative scale or the noise is not defined yet), and the spread the
   * log gave. designerNorm / intentNorm are then the checkpoint's own values on the scale current at it
   * (null while the relative scale is undefined).
   */
  external?: { designerLevel: number | null; intentLevel: number | null; designerSe: number | null; intentSe: number | null; designerStd?: number; intentStd?: number };
}

/** One alert (the payload of one alerts.jsonl line). */
export interface Alert {
  step: number;
  kind: AlertKind;
  /** Size of the effect in normalized units (intent fall, gap, or -rho). */
  magnitude: number;
  message: string;
}

// ---- manifest.json ----

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
  /**
   * Content hashes of the run's input files and gapwatch's version (src/env/inputs.ts); the run id
   * includes `inputs.hash`. Absent in runs written before content addressing.
   */
  inputs?: RunInputs;
  packageVersion: string;
  nodeVersion: string;
  /** ISO time the run started (the only clock value in the run directory besides summary timings). */
  createdAt: string;
}

/** One hashed input file of a run. */
export interface InputFile {
  /** "env", "reward", or a module's local import as a path relative to the module's folder. */
  role: string;
  /** The file as resolved on the machine that ran it (informative; not part of the digest). */
  path: string;
  sha256: string;
  bytes: number;
}

/** manifest.json "inputs". */
export interface RunInputs {
  files: InputFile[];
  gapwatch: string;
  /** SHA-256 over the roles, the file hashes and the version (what run ids and job ids include). */
  hash: string;
}

export interface ScoreReferencesDoc {
  designerOptimal: number;
  designerRandom: number;
  intentOptimal: number;
  intentRandom: number;
}

// ---- external runs (`gapwatch ingest`) ----

/** One source file read by `gapwatch ingest`, as it was when the run was stored. */
export interface SourceFileDoc {
  path: string;
  bytes: number;
  /** SHA-256 of the file's content, hex. */
  sha256: string;
}

/** What an external run read and how (manifest.json "source"): everything its run id hashes. */
export interface ExternalSourceDoc {
  /** The input paths as given, absolute. */
  inputs: string[];
  /** Every file read, in reading order. */
  files: SourceFileDoc[];
  /** tfevents, monitor-csv, csv or jsonl (detected or forced). */
  format: string;
  /** Which series are the designer and intent scores, and the step column of tables (null: event files / monitor CSV). */
  mapping: { designer: string; intent: string; step: string | null; run: string | null };
  /** LOW:HIGH per score in the user's units; null: the relative scale. */
  ranges: { designer: { low: number; high: number } | null; intent: { low: number; high: number } | null };
  /** Step window pooling episodes into checkpoints; null when the log holds checkpoints. */
  window: number | null;
  /** Checkpoint value = mean of the last N episodes ended by the window end, instead of the window's own episodes; null: window means. */
  rolling: number | null;
}

/** manifest.json of an external run: no training config, a `source` block instead. */
export interface ExternalRunManifest {
  format: "gapwatch-run/1";
  kind: "external";
  runId: string;
  source: ExternalSourceDoc;
  packageVersion: string;
  nodeVersion: string;
  createdAt: string;
}

// ---- summary.json ----

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
  /** External runs: true when at least one score is on the relative scale (no range given). */
  relative?: boolean;
  finishedAt: string;
}

// ---- policy.json ----

/** policy.json: the final greedy policy and the learner's own state. */
export interface RunPolicyFile {
  format: "gapwatch-run-policy/1";
  runId: string;
  /** Step the policy was taken at. */
  step: number;
  /** The model's action names, in index order. */
  actions: string[];
  /** Greedy action name per state (null on terminal states). */
  greedy: (string | null)[];
  /** The learner's serialized state (its `toJSON()`). */
  learner: object;
}

// ---- what readers get ----

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
  /**
   * External runs only (`gapwatch ingest`): what was read. `config` is then a stand-in for readers of
   * trained runs (env "external", reward = the designer series, learner "external", seed 0) and
   * `references` holds the ranges (NaN where a score is on the relative scale).
   */
  source?: ExternalSourceDoc;
  relative?: boolean;
}
