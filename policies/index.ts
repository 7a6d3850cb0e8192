/**
 * The learner registry: name -> { create, train, trainAsync, tabular, resolve }. The monitor picks a
 * learner by name and calls `train(env, config, opts)`; every learner sees only a TabularEnv.
 */
import type { TabularEnv } from "../src/model/learner-view.js";
import { InputError } from "../src/errors.js";
import { drive, driveAsync, type Session, type TrainOptions, type TrainResult } from "./driver.js";
import { QLearningSession, resolveQLearning, type QLearningConfig } from "./qlearning.js";
import { SarsaSession, resolveSarsa, type SarsaConfig } from "./sarsa.js";
import { ExpectedSarsaSession, resolveExpectedSarsa, type ExpectedSarsaConfig } from "./expected-sarsa.js";
import { DoubleQSession, resolveDoubleQ, type DoubleQConfig } from "./double-q.js";
import { LinearSarsaSession, resolveLinearSarsa, type LinearSarsaConfig } from "./linear-sarsa.js";

export type { Agent, Session, TrainOptions, TrainResult, TrainStats } from "./driver.js";
export type { TabularConfig } from "./tabular.js";
export { argmaxRow, epsilonGreedy, greedyProbability } from "./selection.js";
export { drive, driveAsync } from "./driver.js";
export { scheduleValue, type Schedule, type ScheduleSpec } from "./schedules.js";
export { trainQLearning, type QLearningConfig } from "./qlearning.js";
export type { SarsaConfig, ExpectedSarsaConfig, DoubleQConfig, LinearSarsaConfig };

/** A learner config tagged with the learner's name; omitted fields take the learner's defaults. */
export type LearnerConfig =
  | ({ learner: "q-learning" } & Partial<QLearningConfig>)
  | ({ learner: "sarsa" } & Partial<SarsaConfig>)
  | ({ learner: "expected-sarsa" } & Partial<ExpectedSarsaConfig>)
  | ({ learner: "double-q" } & Partial<DoubleQConfig>)
  | ({ learner: "linear-sarsa" } & Partial<LinearSarsaConfig>);

export type LearnerName = LearnerConfig["learner"];

export interface LearnerEntry {
  readonly name: LearnerName;
  /** True for table-based learners (values per state id); false for function approximation. */
  readonly tabular: boolean;
  readonly description: string;
  /** Fill defaults and validate (throws InputError with a `config.*` code). */
  resolve(config: object): object;
  create(env: TabularEnv, config: object, opts: TrainOptions): Session;
  train(env: TabularEnv, config: object, opts: TrainOptions): TrainResult;
  trainAsync(env: TabularEnv, config: object, opts: TrainOptions): Promise<TrainResult>;
}

function entry(
  name: LearnerName,
  tabular: boolean,
  description: string,
  resolve: (c: object) => object,
  make: (env: TabularEnv, c: object, opts: TrainOptions) => Session,
): LearnerEntry {
  const create = (env: TabularEnv, config: object, opts: TrainOptions) => make(env, resolve(config), opts);
  return {
    name,
    tabular,
    description,
    resolve,
    create,
    train: (env, config, opts) => drive(create(env, config, opts), opts),
    trainAsync: (env, config, opts) => driveAsync(create(env, config, opts), opts),
  };
}

export const learners: Readonly<Record<LearnerName, LearnerEntry>> = {
  "q-learning": entry("q-learning", true, "tabular Q-learning (off-policy TD control)", (c) => resolveQLearning(c), (e, c, o) => new QLearningSession(e, c as QLearningConfig, o)),
  sarsa: entry("sarsa", true, "tabular SARSA (on-policy TD control)", (c) => resolveSarsa(c), (e, c, o) => new SarsaSession(e, c as SarsaConfig, o)),
  "expected-sarsa": entry("expected-sarsa", true, "tabular Expected SARSA", (c) => resolveExpectedSarsa(c), (e, c, o) => new ExpectedSarsaSession(e, c as ExpectedSarsaConfig, o)),
  "double-q": entry("double-q", true, "tabular Double Q-learning", (c) => resolveDoubleQ(c), (e, c, o) => new DoubleQSession(e, c as DoubleQConfig, o)),
  "linear-sarsa": entry("linear-sarsa", false, "semi-gradient SARSA, linear over tile-coded observations", (c) => resolveLinearSarsa(c), (e, c, o) => new LinearSarsaSession(e, c as LinearSarsaConfig, o)),
};

export const defaultLearner: LearnerName = "q-learning";

export function learnerEntry(name: string): LearnerEntry {
  // Own properties only: a name like "constructor" must not reach Object.prototype.
  const e = Object.hasOwn(learners, name) ? (learners as Record<string, LearnerEntry>)[name] : undefined;
  if (!e) throw new InputError("config.learner", `unknown learner ${JSON.stringify(name)}; choose one of ${Object.keys(learners).join(", ")}`, "learner");
  return e;
}

function strip(config: LearnerConfig): object {
  const { learner: _omit, ...rest } = config;
  return rest;
}

/** Train the named learner on env for opts.steps environment steps. */
export function train(env: TabularEnv, config: LearnerConfig, opts: TrainOptions): TrainResult {
  return learnerEntry(config.learner).train(env, strip(config), opts);
}
