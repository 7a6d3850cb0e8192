/**
 * Batch data shapes. A `BatchJob` is one training run of a sweep: its `TrainConfigInput`, a
 * deterministic job id, and (for the Redis backend) the text of every input file it names so that a
 * worker on another machine needs no shared disk. A `RunOutcome` is what comes back: the RunResult of
 * a completed run, or a failure with its typed error code.
 */
import type { RunResult, TrainConfigInput } from "../run/schema.js";

export interface BatchJob {
  /** Deterministic: SHA-256 of the canonical input config and of the shipped file texts (see plan.ts). */
  jobId: string;
  input: TrainConfigInput;
  /** Input files by the spec string that names them in `input` (env / reward), with their text. */
  files?: Record<string, string>;
  /**
   * When the env is a model-file family (`<folder>#N`, `<a.json,b.json>#N`): the key in `files` of the
   * family member the layout chose, which the worker loads as the env (the folder is not on its disk).
   */
  envFile?: string;
  /** State bound when the env is a simulator module (`--max-states`); not part of the job id. */
  maxStates?: number;
  /** Where the job sits in the matrix (for reports). */
  cell: { reward: string; learner: string; seed: number };
}

export interface RunFailure {
  code: string;
  message: string;
  where?: string;
  /** 2 = bad input (not retried), 1 = internal. */
  exitCode: number;
}

export type RunOutcome =
  | { jobId: string; cell: BatchJob["cell"]; ok: true; result: RunResult; attempts?: number }
  | { jobId: string; cell: BatchJob["cell"]; ok: false; error: RunFailure; attempts?: number };

/**
 * A completed run as shipped back by a remote worker: its run id and the run directory's files. The
 * coordinator writes them and reads the RunResult back from disk (`readRun`), so the result it
 * reports is exactly what the run store holds.
 */
export interface ShippedRun {
  runId: string;
  /** File name (manifest.json, checkpoints.jsonl, ...) -> exact text. */
  files: Record<string, string>;
}

export interface BatchProgress {
  done: number;
  total: number;
  failed: number;
  outcome: RunOutcome;
}
