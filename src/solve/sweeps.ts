/**
 * Exact dynamic programming on a FiniteModel: iterative policy evaluation, value iteration, policy
 * iteration. Rewards are per outcome (designer reward of a variant, or `model.intent`). Pure; no I/O.
 *
 * Conventions: V = 0 on terminal states; sweeps are synchronous (two arrays, "Jacobi") unless
 * `inPlace` is set; a solver stops after the first sweep whose largest change is below `tol`, and
 * that sweep counts. Greedy ties go to the lowest action index.
 */
import type { FiniteModel } from "../model/types.js";

/** A stochastic policy: nStates * nActions probabilities, rows summing to 1. */
export type Policy = Float64Array;

export interface SolveOptions {
  gamma?: number;
  /** Stop after the first sweep with max |delta| < tol. Default 1e-10. */
  tol?: number;
  maxIters?: number;
  /** Gauss-Seidel (in-place) sweeps in state order instead of synchronous ones. */
  inPlace?: boolean;
  /**
   * Policy evaluation only: compute the fixed point v_pi to within this max-norm distance,
   * guaranteed, by the fastest method available (`evaluateFixedPoint`; ignores `tol` and `inPlace`).
   * With gamma >= 1 no such bound exists and it means synchronous sweeps with tol = accuracy.
   */
  accuracy?: number;
}

export interface Evaluation {
  values: Float64Array;
  iters: number;
  converged: boolean;
  /** Accuracy mode only: guaranteed bound on max |values - v_pi|. */
  errorBound?: number;
}

export interface Solution extends Evaluation {
  /** Greedy action per state (lowest index on ties); -1 on terminal states. */
  policy: Int32Array;
  /** Action values, nStates * nActions. */
  q: Float64Array;
}

/** Default `tol` of every solver here (also the parallel sweeps of parallel.ts). */
export const DEFAULT_TOL = 1e-10;

/** Default `maxIters` for a discount (also used by parallel.ts, so both stop alike). */
export function defaultMaxIters(gamma: number): number {
  return gamma < 1 ? Math.max(10_000, Math.ceil(Math.log(1e-12) / Math.log(gamma)) * 4) : 1_000_000;
}

/** Expected immediate reward per (s, a) and the outcome structure, precomputed once per solve. */
export function expectedReward(model: FiniteModel, reward: Float64Array): Float64Array {
  const nSA = model.nStates * model.nActions;
  const r = new Float64Array(nSA);
  for (let k = 0; k < nSA; k++) r[k] = expectedRewardAt(model, reward, k);
  return r;
}

/** One entry of `expectedReward`: sum_o p_o reward_o over the outcomes of state-action k. */
export function expectedRewardAt(model: FiniteModel, reward: Float64Array, k: number): number {
  const lo = model.saStart[k];
  const hi = model.saStart[k + 1];
  if (hi - lo === 1) return reward[lo];
  const prob = model.prob;
  let acc = 0;
  for (let o = lo; o < hi; o++) acc += prob[o] * reward[o];
  return acc;
}

/** Q(s, a) = r(s, a) + gamma * sum_o p_o V(next_o). Single-outcome pairs skip the multiply by 1. */
function backup(model: FiniteModel, r: Float64Array, gamma: number, V: Float64Array, k: number): number {
  const lo = model.saStart[k];
  const hi = model.saStart[k + 1];
  if (hi - lo === 1) return r[k] + gamma * V[model.next[lo]];
  let ev = 0;
  for (let o = lo; o < hi; o++) ev += model.prob[o] * V[model.next[o]];
  return r[k] + gamma * ev;
}

/** Q = r + gamma * P V for every (s, a); zeros on terminal states. */
export function actionValues(model: FiniteModel, reward: Float64Array, V: Float64Array, gamma = model.gamma): Float64Array {
  return actionValuesFrom(model, expectedReward(model, reward), V, gamma);
}

/** `actionValues` from the expected reward per (s, a) (`expectedReward`). */
export function actionValuesFrom(model: FiniteModel, r: Float64Array, V: Float64Array, gamma = model.gamma): Float64Array {
  const nA = model.nActions;
  const q = new Float64Array(model.nStates * nA);
  for (let s = 0; s < model.nStates; s++) {
    if (model.terminal[s]) continue;
    for (let a = 0; a < nA; a++) q[s * nA + a] = backup(model, r, gamma, V, s * nA + a);
  }
  return q;
}

/** Greedy action per state, lowest index on ties (exact comparison); -1 on terminal states. */
export function greedyActions(model: FiniteModel, q: Float64Array, tieTol = 0): Int32Array {
  const nA = model.nActions;
  const pi = new Int32Array(model.nStates);
  for (let s = 0; s < model.nStates; s++) {
    if (model.terminal[s]) {
      pi[s] = -1;
      continue;
    }
    let best = 0;
    for (let a = 1; a < nA; a++) if (q[s * nA + a] > q[s * nA + best] + tieTol) best = a;
    pi[s] = best;
  }
  return pi;
}

/**
 * The iteration every sweep-based solver shares: from V = 0, call `sweep(V, W)` (it writes W and returns
 * max |W - V|; W is V itself when `inPlace`), swap the buffers, and stop after the first sweep whose
 * change is below `tol` (that sweep counts) or after `maxIters` sweeps.
 */
export function iterateSweeps(n: number, tol: number, maxIters: number, inPlace: boolean, sweep: (V: Float64Array, W: Float64Array) => number): Evaluation {
  let V = new Float64Array(n);
  let W = inPlace ? V : new Float64Array(n);
  let iters = 0;
  let converged = false;
  while (iters < maxIters) {
    const delta = sweep(V, W);
    iters++;
    if (!inPlace) {
      const t = V;
      V = W;
      W = t;
    }
    if (delta < tol) {
      converged = true;
      break;
    }
  }
  return { values: V, iters, converged };
}
