/**
 * The benchmark's Q-learning goes through our learner code: `trainQLearning` of
 * policies/qlearning.ts, over `viewEnv(learnerView(model, reward))`, with constant alpha 0.1,
 * gamma 0.99, epsilon 0.1 and one Xorshift32 stream (PROBLEM.md section 5). The lava field is
 * deterministic with a single start state, so the environment never draws and the stream feeds only
 * the exploration draws.
 */
import { trainQLearning } from "../../policies/qlearning.js";
import { learnerView, viewEnv } from "../model/learner-view.js";
import type { Rng } from "../rng/rng.js";
import type { FiniteModel } from "../model/types.js";

export interface BenchQOptions {
  steps: number;
  alpha: number;
  gamma: number;
  epsilon: number;
}

export interface BenchQResult {
  /** nStates * nActions action values. */
  q: Float64Array;
  /** Completed episodes (terminated + truncated). */
  episodes: number;
  /** Episodes cut at the horizon. */
  timeouts: number;
  /** Per state: episodes that terminated by entering it. */
  endedIn: Float64Array;
}

/** Everything `trainBenchQ` needs, built before a timed region. */
export function benchQEnv(model: FiniteModel, reward: Float64Array) {
  return viewEnv(learnerView(model, reward));
}

/** Train Q-learning from Q = 0 for `opts.steps` steps; `rng` is both exploration and environment stream. */
export function trainBenchQ(env: ReturnType<typeof benchQEnv>, rng: Rng, opts: BenchQOptions): BenchQResult {
  const res = trainQLearning(env, { alpha: opts.alpha, gamma: opts.gamma, epsilon: opts.epsilon }, { steps: opts.steps, rng, envRng: rng });
  const q = res.agent.qValues?.();
  if (!q) throw new Error("q-learning agent exposes no action values");
  return { q, episodes: res.stats.episodes, timeouts: res.stats.truncated, endedIn: res.stats.terminatedAt };
}
