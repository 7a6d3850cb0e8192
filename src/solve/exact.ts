/**
 * Exact solving whose cost does not grow with 1/(1 - gamma): policy evaluation by one dense linear
 * solve of (I - gamma P_pi) v = r_pi (Gaussian elimination with partial pivoting, engine/dense.ts),
 * and policy iteration (Sutton & Barto 2018, section 4.3; Puterman 1994, section 6.4: finitely many
 * improvements, each a strict improvement, so it ends at an optimal policy) over those exact
 * evaluations. Used by `solveVariant` when the discount is close to 1, where value iteration needs
 * on the order of 1/(1 - gamma) sweeps. Pure; no I/O.
 *
 * Cost: O(n^3) per evaluation for n live states (n = 640 on the largest built-in: ~0.1 s), a handful of
 * evaluations when started from the greedy policy of a short run of value-iteration sweeps.
 *
 * gamma = 1: the linear system of a policy is singular when the policy can stay forever among live
 * states (an improper policy: it never reaches a terminal state from some state). The result then says
 * so (`improper`) instead of returning values: with a loop that pays, the values are unbounded.
 */
import type { FiniteModel } from "../model/types.js";
import { solveDense } from "./engine/dense.js";
import { chainReward, policyChain } from "./evaluation.js";
import { deterministicPolicy } from "./policy.js";
import { improvePolicy } from "./policy-iteration.js";
import { actionValues, greedyActions, type Policy, type Solution } from "./sweeps.js";
import { valueSweeps } from "./value-iteration.js";

/** Discounts above this are solved by `exactPolicyIteration` in `solveVariant`: value iteration's cap grows as 1/(1 - gamma). */
export const EXACT_GAMMA = 0.999;

/**
 * v_pi exactly (up to rounding) for a stochastic policy, or null when (I - gamma P_pi) is singular
 * (gamma = 1 and the policy keeps some state away from every terminal state forever).
 */
export function evaluateExact(model: FiniteModel, reward: Float64Array, policy: Policy, gamma: number): Float64Array {
  const v = evaluateExactOrNull(model, reward, policy, gamma);
  if (v === null) throw new Error(`policy system singular at gamma ${gamma}: the policy never ends from some state`);
  return v;
}

/** `evaluateExact`, or null when (I - gamma P_pi) is singular. */
export function evaluateExactOrNull(model: FiniteModel, reward: Float64Array, policy: Policy, gamma: number): Float64Array | null {
  const chain = policyChain(model, policy);
  const m = chain.states.length;
  const b = chainReward(model, chain, policy, reward);
  const a = new Float64Array(m * m);
  for (let i = 0; i < m; i++) {
    a[i * m + i] = 1 - gamma * chain.self[i];
    for (let k = chain.rowStart[i]; k < chain.rowStart[i + 1]; k++) a[i * m + chain.col[k]] -= gamma * chain.weight[k];
  }
  if (!solveDense(a, b, m)) return null;
  const V = new Float64Array(model.nStates);
  for (let i = 0; i < m; i++) {
    if (!Number.isFinite(b[i])) return null;
    V[chain.states[i]] = b[i];
  }
  return V;
}

export type ExactSolution = (Solution & { policyIters: number; improper?: undefined }) | { improper: Int32Array; policyIters: number };

/**
 * Policy iteration with exact evaluations, started from the greedy policy of `warmSweeps` value-iteration
 * sweeps. Improvement keeps the current action unless another beats it by more than a rounding margin
 * (1e-12 relative), so it cannot cycle on ties. `maxPolicyIters` bounds the improvements (converged =
 * false when reached). When a policy's system is singular, returns that policy as `improper`.
 */
export function exactPolicyIteration(
  model: FiniteModel,
  reward: Float64Array,
  gamma: number,
  opts: { maxPolicyIters?: number; warmSweeps?: number } = {},
): ExactSolution {
  const warm = valueSweeps(model, reward, { gamma, maxIters: opts.warmSweeps ?? 4 * model.nStates + 100 });
  let actions = greedyActions(model, actionValues(model, reward, warm.values, gamma));
  const maxPolicyIters = opts.maxPolicyIters ?? 1000;
  for (let policyIters = 1; ; policyIters++) {
    const values = evaluateExactOrNull(model, reward, deterministicPolicy(model, actions), gamma);
    if (values === null) return { improper: actions, policyIters };
    const q = actionValues(model, reward, values, gamma);
    const { improved, stable } = improvePolicy(model, q, actions, 1e-12);
    if (stable || policyIters >= maxPolicyIters) {
      // Report the greedy policy of the exact values with the textbook tie rule (lowest index).
      return { values, iters: policyIters, converged: stable, policy: greedyActions(model, q, 1e-12), q, policyIters };
    }
    actions = improved;
  }
}
