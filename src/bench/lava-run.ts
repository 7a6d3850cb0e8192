/**
 * Our implementations on the lava benchmark: generic value iteration (src/solve/value-iteration.ts) and tabular
 * Q-learning (src/bench/ql.ts) over the FiniteModel of lava.ts, returning the CHECK line and the
 * time of the timed region only (PROBLEM.md section 7):
 *  - vi: `valueSweeps`, the sweeps of `valueIteration`. Its tables (`sweepPlan`: expected reward, live
 *    states, packed successors; one pass over the outcomes) are built before the clock starts; the action values and greedy policy that `valueIteration` adds afterwards are
 *    computed after it stops (same functions, same results).
 *  - vi-par: the same sweeps split over 2 threads (`runLavaViParallel`, solve/parallel.ts), its own row.
 *  - ql: one call of `trainQLearning` (policies/qlearning.ts) for STEPS steps: the step loop plus the
 *    learner's session set-up (allocating its S x 4 table and counters, O(S), negligible at 32x32).
 *    Model building, the learner view, checksums and the rollout are outside.
 */
import { Xorshift32 } from "../rng/rng.js";
import { actionValues, greedyActions, type Evaluation } from "../solve/sweeps.js";
import { sweepPlan, valueSweeps } from "../solve/value-iteration.js";
import { prepareParallelSweeps } from "../solve/parallel.js";
import { planValueIteration, solveValuesEngine } from "../solve/engine/index.js";
import { argmaxRow, greedyRollout, qlCheckLine, viCheckLine } from "./check.js";
import { KIND_GOAL, KIND_LAVA, LAVA_GAMMA, lavaModel, type LavaProblem } from "./lava.js";
import { benchQEnv, trainBenchQ } from "./ql.js";

export const QL_ALPHA = 0.1;
export const QL_GAMMA = 0.99;
export const QL_EPSILON = 0.1;
export const QL_STEPS = 5_000_000;
export const QL_SEED = 2654435769;
export const VI_TOL = 1e-10;

/** Monotonic seconds. */
export type Clock = () => number;
export const hrClock: Clock = () => Number(process.hrtime.bigint()) / 1e9;

export interface Measured {
  check: string;
  seconds: number;
  /** Sweeps (vi) or steps (ql). */
  work: number;
}

export function runLavaVi(W: number, H: number, clock: Clock = hrClock, problem: LavaProblem = lavaModel(W, H)): Measured & { iters: number } {
  const { model, reward } = problem;
  const plan = sweepPlan(model, reward);
  const t0 = clock();
  const ev = valueSweeps(model, reward, { gamma: LAVA_GAMMA, tol: VI_TOL }, plan);
  const seconds = clock() - t0;
  const policy = greedyActions(model, actionValues(model, reward, ev.values, LAVA_GAMMA));
  const rollout = greedyRollout(problem, (s) => policy[s]);
  return { check: viCheckLine({ W, H, iters: ev.iters, values: ev.values, rollout }), seconds, work: ev.iters, iters: ev.iters };
}

/**
 * `runLavaVi` with each sweep split over `threads` threads (solve/parallel.ts). The timed region is
 * the same, the sweeps only; `setupSeconds` is what comes before it on top of `sweepPlan`: copying
 * the tables into shared memory and starting the worker threads (until each reports ready).
 */
export async function runLavaViParallel(
  W: number,
  H: number,
  threads = 2,
  clock: Clock = hrClock,
  problem: LavaProblem = lavaModel(W, H),
): Promise<Measured & { iters: number; setupSeconds: number; threads: number }> {
  const { model, reward } = problem;
  const plan = sweepPlan(model, reward);
  const s0 = clock();
  const sweeps = await prepareParallelSweeps(model, reward, { gamma: LAVA_GAMMA, tol: VI_TOL, threads }, plan);
  const t0 = clock();
  let ev: Evaluation;
  let seconds: number;
  try {
    ev = sweeps.run();
    seconds = clock() - t0;
  } finally {
    await sweeps.close();
  }
  const policy = greedyActions(model, actionValues(model, reward, ev.values, LAVA_GAMMA));
  const rollout = greedyRollout(problem, (s) => policy[s]);
  const check = viCheckLine({ W, H, iters: ev.iters, values: ev.values, rollout });
  return { check, seconds, work: ev.iters, iters: ev.iters, setupSeconds: t0 - s0, threads };
}

/**
 * The component-wise engine (src/solve/engine, the default exact solver of every command) on the same
 * problem, asked for accuracy VI_TOL (a proven max-norm bound). Timed region: time to solution, the
 * reward-independent plan (`planValueIteration`: graph, components, order) and the solve together;
 * `planSeconds` is the plan's share. `iters` is its work in sweeps of the live states (backups / live
 * states, rounded up); its CHECK line is compared to the synchronous one by `viCheckClose`.
 */
export function runLavaViEngine(W: number, H: number, clock: Clock = hrClock, problem: LavaProblem = lavaModel(W, H)): Measured & { iters: number; planSeconds: number; errorBound: number } {
  const { model, reward } = problem;
  const t0 = clock();
  const plan = planValueIteration(model);
  const t1 = clock();
  const res = solveValuesEngine(model, reward, { gamma: LAVA_GAMMA, accuracy: VI_TOL }, plan);
  const seconds = clock() - t0;
  let live = 0;
  for (let s = 0; s < model.nStates; s++) if (!model.terminal[s]) live++;
  const iters = Math.ceil(res.stats.backups / Math.max(1, live));
  const policy = greedyActions(model, actionValues(model, reward, res.values, LAVA_GAMMA));
  const rollout = greedyRollout(problem, (s) => policy[s]);
  return { check: viCheckLine({ W, H, iters, values: res.values, rollout }), seconds, work: iters, iters, planSeconds: t1 - t0, errorBound: res.errorBound };
}

export function runLavaQl(W: number, H: number, steps = QL_STEPS, seed = QL_SEED, clock: Clock = hrClock, problem: LavaProblem = lavaModel(W, H)): Measured {
  const { model, reward, kind } = problem;
  const env = benchQEnv(model, reward);
  const rng = new Xorshift32(seed);
  const t0 = clock();
  const res = trainBenchQ(env, rng, { steps, alpha: QL_ALPHA, gamma: QL_GAMMA, epsilon: QL_EPSILON });
  const seconds = clock() - t0;
  let goals = 0;
  let hazards = 0;
  for (let s = 0; s < model.nStates; s++) {
    if (kind[s] === KIND_GOAL) goals += res.endedIn[s];
    else if (kind[s] === KIND_LAVA) hazards += res.endedIn[s];
  }
  const rollout = greedyRollout(problem, (s) => argmaxRow(res.q, s, model.nActions));
  const check = qlCheckLine({ W, H, steps, seed, episodes: res.episodes, goals, hazards, timeouts: res.timeouts, q: res.q, rollout });
  return { check, seconds, work: steps };
}
