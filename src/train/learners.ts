/**
 * The learners `runTraining` can use, by name. Each entry trains through the shared driver
 * (policies/common.ts): synchronous `train` for batch workers and tests, `trainAsync` (yields between
 * checkpoints) for the CLI, so Ctrl-C can stop a run.
 */
import type { TabularEnv } from "../model/learner-view.js";
import { InputError } from "../errors.js";
import type { TrainOptions, TrainResult } from "../../policies/common.js";
import { trainQLearning, trainQLearningAsync } from "../../policies/qlearning.js";
import { trainSarsa, trainSarsaAsync } from "../../policies/sarsa.js";
import { trainExpectedSarsa, trainExpectedSarsaAsync } from "../../policies/expected-sarsa.js";
import { trainDoubleQ, trainDoubleQAsync } from "../../policies/double-q.js";

export interface LearnerEntry {
  train(env: TabularEnv, params: Record<string, unknown>, opts: TrainOptions): TrainResult;
  trainAsync(env: TabularEnv, params: Record<string, unknown>, opts: TrainOptions): Promise<TrainResult>;
}

const entries: Record<string, LearnerEntry> = {
  "q-learning": { train: trainQLearning, trainAsync: trainQLearningAsync },
  sarsa: { train: trainSarsa, trainAsync: trainSarsaAsync },
  "expected-sarsa": { train: trainExpectedSarsa, trainAsync: trainExpectedSarsaAsync },
  "double-q": { train: trainDoubleQ, trainAsync: trainDoubleQAsync },
};

export function learnerNames(): string[] {
  return Object.keys(entries);
}

export function getLearner(name: string): LearnerEntry {
  const e = entries[name];
  if (!e) throw new InputError("config.learner", `unknown learner "${name}"; known: ${learnerNames().join(", ")}`, "--learner");
  return e;
}
