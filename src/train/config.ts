/**
 * The defaults of `TrainConfig` (src/run/schema.ts) in one place
 * (`TRAIN_DEFAULTS`, `defaultSteps`). The resolved config is what the manifest stores and what the
 * run id hashes, so two runs with equal resolved configs are the same run.
 */
import { InputError } from "../errors.js";
import type { FiniteModel } from "../model/types.js";
import type { EvaluationMode, TrainConfig } from "../run/schema.js";
import { defaultLearner } from "../../policies/index.js";

export const TRAIN_DEFAULTS = {
  learner: defaultLearner as string,
  seed: 1,
  checkpoints: 20,
  evaluation: "exact" as EvaluationMode,
  mcEpisodes: 300,
  /**
   * Step-size and exploration schedules for the tabular learners, linear over the whole run:
   * alpha 0.2 -> 0.02 and epsilon 0.3 -> 0.05. Constant alpha = 0.1 leaves Q-learning's greedy policy
   * flipping between near-equal routes on slippery maps at the end of a run, and constant epsilon =
   * 0.1 lets it settle early in a local optimum (tuning runs, seeds 1-10, scripts/tune.ts).
   */
  tabularSchedules: { alpha: [0.2, 0.02], epsilon: [0.3, 0.05] },
  /** Step budget per (state, action) pair when neither --steps nor the scenario gives one. */
  stepsPerPair: 400,
  minSteps: 20_000,
} as const;

/**
 * Default training length: the scenario's `trainSteps` when it declares one, else 400 steps per
 * state-action pair (at least 20 000), rounded up to a multiple of the checkpoint count. With
 * tabular Q-learning this is a fraction of a second on every built-in scenario.
 */
export function defaultSteps(model: Pick<FiniteModel, "nStates" | "nActions">, checkpoints: number, declared?: unknown): number {
  const raw =
    typeof declared === "number" && Number.isSafeInteger(declared) && declared > 0
      ? declared
      : Math.max(TRAIN_DEFAULTS.minSteps, TRAIN_DEFAULTS.stepsPerPair * model.nStates * model.nActions);
  return Math.ceil(raw / checkpoints) * checkpoints;
}

/** Default learner parameters: the model's discount, and for tabular learners the schedules above over `steps`. */
export function defaultLearnerParams(tabular: boolean, model: Pick<FiniteModel, "gamma">, steps: number): Record<string, unknown> {
  const out: Record<string, unknown> = { gamma: model.gamma };
  if (tabular) {
    const { alpha, epsilon } = TRAIN_DEFAULTS.tabularSchedules;
    out.alpha = { kind: "linear", start: alpha[0], end: alpha[1], steps };
    out.epsilon = { kind: "linear", start: epsilon[0], end: epsilon[1], steps };
  }
  return out;
}

export function checkTrainConfig(c: TrainConfig): void {
  const int = (v: number, key: string, min: number) => {
    if (!(Number.isSafeInteger(v) && v >= min)) throw new InputError(`config.${key}`, `${key} must be an integer >= ${min}, got ${v}`, `train.${key}`);
  };
  int(c.steps, "steps", 1);
  int(c.seed, "seed", 0);
  int(c.checkpoints, "checkpoints", 1);
  int(c.mcEpisodes, "mcEpisodes", 2);
  if (c.checkpoints > c.steps) throw new InputError("config.checkpoints", `checkpoints (${c.checkpoints}) cannot exceed steps (${c.steps})`, "train.checkpoints");
  if (!["exact", "mc", "both"].includes(c.evaluation)) {
    throw new InputError("config.evaluation", `evaluation must be exact, mc or both, got "${String(c.evaluation)}"`, "train.evaluation");
  }
}

/** The checkpoint interval for a config. */
export function checkpointEvery(c: Pick<TrainConfig, "steps" | "checkpoints">): number {
  return Math.ceil(c.steps / c.checkpoints);
}
