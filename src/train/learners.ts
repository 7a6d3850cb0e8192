/**
 * The learners `runTraining` can use, by name: a thin view of the registry in policies/index.ts.
 * Synchronous `train` serves batch workers and tests; `trainAsync` (yields between checkpoints)
 * serves the CLI, so Ctrl-C can stop a run.
 */
import type { TabularEnv } from "../model/learner-view.js";
import type { TrainOptions, TrainResult } from "../../policies/driver.js";
import { learnerEntry, learners } from "../../policies/index.js";

export interface LearnerEntry {
  /** True for table-based learners (the shared tabular parameters and schedules apply). */
  tabular: boolean;
  train(env: TabularEnv, params: Record<string, unknown>, opts: TrainOptions): TrainResult;
  trainAsync(env: TabularEnv, params: Record<string, unknown>, opts: TrainOptions): Promise<TrainResult>;
}

export function learnerNames(): string[] {
  return Object.keys(learners);
}

/** The named learner; throws InputError `config.learner` (exit 2) for an unknown name. */
export function getLearner(name: string): LearnerEntry {
  const e = learnerEntry(name);
  return { tabular: e.tabular, train: (env, p, o) => e.train(env, p, o), trainAsync: (env, p, o) => e.trainAsync(env, p, o) };
}
