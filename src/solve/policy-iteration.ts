/** Policy iteration on a FiniteModel. Pure; no I/O. */
import type { FiniteModel } from "../model/types.js";
import { evaluatePolicy } from "./evaluation.js";
import { deterministicPolicy } from "./policy.js";
import { actionValues, type SolveOptions, type Solution } from "./sweeps.js";

/**
 * Policy improvement: per live state the greedy action of `q`, keeping the current action unless
 * another beats it by more than `margin * (1 + |q|)` (a rounding margin, so ties cannot cycle).
 */
export function improvePolicy(model: FiniteModel, q: Float64Array, actions: Int32Array, margin: number): { improved: Int32Array; stable: boolean } {
  const improved = new Int32Array(model.nStates);
  let stable = true;
  const nA = model.nActions;
  for (let s = 0; s < model.nStates; s++) {
    if (model.terminal[s]) {
      improved[s] = -1;
      continue;
    }
    let best = actions[s];
    for (let a = 0; a < nA; a++) if (q[s * nA + a] > q[s * nA + best] + margin * (1 + Math.abs(q[s * nA + best]))) best = a;
    improved[s] = best;
    if (best !== actions[s]) stable = false;
  }
  return { improved, stable };
}

/** Policy iteration (Sutton & Barto 2018, section 4.3) from the all-zeros policy. */
export function policyIteration(model: FiniteModel, reward: Float64Array, opts: SolveOptions & { maxPolicyIters?: number } = {}): Solution & { policyIters: number } {
  const gamma = opts.gamma ?? model.gamma;
  let actions: Int32Array = new Int32Array(model.nStates);
  for (let s = 0; s < model.nStates; s++) actions[s] = model.terminal[s] ? -1 : 0;
  let policyIters = 0;
  let totalIters = 0;
  const maxPolicyIters = opts.maxPolicyIters ?? 1000;
  for (;;) {
    const ev = evaluatePolicy(model, reward, deterministicPolicy(model, actions), { ...opts, gamma, tol: opts.tol ?? 1e-12 });
    totalIters += ev.iters;
    const q = actionValues(model, reward, ev.values, gamma);
    const { improved, stable } = improvePolicy(model, q, actions, 1e-9);
    policyIters++;
    actions = improved;
    if (stable || policyIters >= maxPolicyIters) {
      return { values: ev.values, iters: totalIters, converged: stable, policy: actions, q, policyIters };
    }
  }
}
