/**
 * The default exact solvers of every command (solve, audit, monitor references, pressure): the
 * component-wise engine of src/solve/engine behind the `Solution` / `Evaluation` shapes of the
 * textbook solvers, so callers swap one call for another.
 *
 * Accuracy: every value within `opts.accuracy` (default FIXED_POINT_ACCURACY, 1e-9) of the exact fixed
 * point in the max norm, proven for gamma < 1 (engine/types.ts). `opts.tol` (the textbook stopping
 * rule) is ignored: the engine stops on the proof, not on a small change. Where the engine proves no
 * bound and does not converge (gamma = 1 with a component it cannot leave, a non-finite value, or
 * `opts.maxIters` sweeps spent in one component) the textbook synchronous solver answers instead, with
 * the caller's options, as before (so a sweep cap too small still reports converged = false).
 *
 * The textbook solvers (`valueIteration`, `evaluatePolicy`) stay exported for the textbook tests and
 * for anyone who needs their sweep counts. `iters` here is the engine's work in sweeps of the live
 * states (state backups / live states, rounded up), not a sweep count of the textbook method.
 */
import type { FiniteModel } from "../model/types.js";
import { deterministicPolicy } from "./policy.js";
import { evaluateFunctional, evaluatePolicyEngineMany, planValueIteration, solveValuesEngine, startValuesEngine, type EngineResult, type ValuePlan } from "./engine/index.js";
import { evaluatePolicyMany, FIXED_POINT_ACCURACY } from "./evaluation.js";
import { actionValues, actionValuesFrom, expectedReward, greedyActions, type Evaluation, type Policy, type Solution, type SolveOptions } from "./sweeps.js";
import { valueIteration } from "./value-iteration.js";

export type { ValuePlan } from "./engine/index.js";
export { planValueIteration } from "./engine/index.js";

function liveStates(model: FiniteModel): number {
  let n = 0;
  for (let s = 0; s < model.nStates; s++) if (!model.terminal[s]) n++;
  return Math.max(1, n);
}

function usable(res: EngineResult): boolean {
  return res.converged && Number.isFinite(res.errorBound);
}

function asEvaluation(model: FiniteModel, res: EngineResult): Evaluation {
  return { values: res.values, iters: Math.ceil(res.stats.backups / liveStates(model)), converged: res.converged, errorBound: res.errorBound };
}

/**
 * Optimal values, greedy policy and action values; `plan` (planValueIteration) reusable per model.
 *
 * Ties: every value is within `accuracy` of the fixed point, so two actions whose exact values are
 * equal can differ by up to about 2 * accuracy here (the textbook's synchronous sweeps from 0 tend to
 * give such actions bit-identical values). Actions within that margin of the best count as tied and
 * the lowest index wins, as in dp.ts's `greedyActions`; wherever the best action beats every other by
 * more than the margin (a few 1e-9) the policy is the exact greedy one.
 */
export function optimalSolution(model: FiniteModel, reward: Float64Array, opts: SolveOptions = {}, plan?: ValuePlan): Solution {
  const gamma = opts.gamma ?? model.gamma;
  const accuracy = opts.accuracy ?? FIXED_POINT_ACCURACY;
  const expected = expectedReward(model, reward);
  const res = solveValuesEngine(model, reward, { gamma, accuracy, maxSweeps: opts.maxIters }, plan ?? planValueIteration(model), expected);
  if (!usable(res)) return valueIteration(model, reward, { ...opts, gamma });
  const q = actionValuesFrom(model, expected, res.values, gamma);
  let scale = 0;
  for (let i = 0; i < q.length; i++) if (Math.abs(q[i]) > scale && Number.isFinite(q[i])) scale = Math.abs(q[i]);
  const tieTol = 2 * Math.max(accuracy, res.errorBound) + 1e-14 * scale;
  const policy = greedyActions(model, q, tieTol);
  // q (8 B per state-action pair) is not held: recomputed from the values on first read.
  return withLazyQ({ ...asEvaluation(model, res), policy }, () => actionValues(model, reward, res.values, gamma));
}

/** `sol` with a `q` property computed by `compute` on first read, then kept. */
function withLazyQ(sol: Omit<Solution, "q">, compute: () => Float64Array): Solution {
  let q: Float64Array | null = null;
  return Object.defineProperty(sol, "q", { get: () => (q ??= compute()), enumerable: true, configurable: true }) as Solution;
}

/** v_pi of `policy` for each reward (one chain and order shared). */
export function policyValuesMany(model: FiniteModel, rewards: Float64Array[], policy: Policy, opts: SolveOptions = {}): Evaluation[] {
  const gamma = opts.gamma ?? model.gamma;
  const res = evaluatePolicyEngineMany(model, rewards, policy, { gamma, accuracy: opts.accuracy ?? FIXED_POINT_ACCURACY, maxSweeps: opts.maxIters });
  if (res.every(usable)) return res.map((r) => asEvaluation(model, r));
  return evaluatePolicyMany(model, rewards, policy, { ...opts, gamma });
}

/** v_pi of `policy` for one reward. */
export function policyValues(model: FiniteModel, reward: Float64Array, policy: Policy, opts: SolveOptions = {}): Evaluation {
  return policyValuesMany(model, [reward], policy, opts)[0];
}

/**
 * v_pi at the start states (start > 0) for each reward, within `opts.accuracy` (default
 * FIXED_POINT_ACCURACY): state-indexed arrays to be read at the start states only (`startValue`).
 * The engine solves only the part of the model the start values depend on to that accuracy
 * (engine/local.ts); where it proves no bound that way (gamma >= 1, say) the whole model is evaluated.
 */
export function startStateValues(model: FiniteModel, rewards: Float64Array[], policy: Policy, opts: SolveOptions = {}): Float64Array[] {
  const gamma = opts.gamma ?? model.gamma;
  const local = startValuesEngine(model, rewards, policy, { gamma, accuracy: opts.accuracy ?? FIXED_POINT_ACCURACY, maxSweeps: opts.maxIters });
  if (local) return local.values;
  return policyValuesMany(model, rewards, policy, opts).map((e) => e.values);
}

/**
 * v_pi of the deterministic policy `actions` (an action per state, -1 on terminal states) for each
 * reward: in one pass along the policy's paths where every chosen action has a single outcome
 * (engine/functional.ts, exact up to rounding), else as `policyValuesMany` of the one-hot policy
 * (`oneHot`, `deterministicPolicy(model, actions)`, when the caller has it already).
 */
export function actionPolicyValues(model: FiniteModel, rewards: Float64Array[], actions: Int32Array, opts: SolveOptions = {}, oneHot?: Policy): Float64Array[] {
  const gamma = opts.gamma ?? model.gamma;
  const direct = evaluateFunctional(model, rewards, actions, gamma);
  if (direct) return direct;
  return policyValuesMany(model, rewards, oneHot ?? deterministicPolicy(model, actions), opts).map((e) => e.values);
}
