/**
 * KL-regularized ("soft") value iteration toward a reference policy pi0 at inverse temperature beta:
 *
 *     Q(s, a) = r(s, a) + gamma * sum_s' P(s' | s, a) V(s')
 *     V(s)    = (1 / beta) log sum_a pi0(a | s) exp(beta Q(s, a))
 *     pi(a|s) = pi0(a | s) exp(beta Q(s, a)) / sum_b pi0(b | s) exp(beta Q(s, b))
 *
 * This is the optimal value of E[sum_t gamma^t (r_t - (1/beta) KL(pi(.|s_t) || pi0(.|s_t)))], the
 * soft-optimality / KL-control identity (Todorov 2007; Ziebart 2010; Rubin, Shamir & Tishby 2012 —
 * cited from memory). beta is the optimization pressure: beta = 0 gives pi0 itself
 * (V = sum_a pi0 Q, handled exactly as the limit), beta -> infinity the greedy optimum restricted to
 * the support of pi0 (`beta = Infinity` is accepted and gives a max over that support).
 * The log-sum-exp is shifted by the row maximum, so large beta does not overflow.
 *
 * KL. `klFromReference` returns the per-state divergence KL(pi(.|s) || pi0(.|s)) and its expected
 * discounted sum along the policy's own trajectories, K(s) = E[sum_t gamma^t KL(s_t) | s_0 = s]
 * (i.e. the KL integrated against the unnormalized discounted occupancy of pi from s; multiply by
 * 1 - gamma for the normalized occupancy average when gamma < 1), and `start` = sum_s start(s) K(s).
 * Then V_soft = V^pi_r - K / beta holds exactly for the soft policy.
 *
 * Conventions as in sweeps.ts: V = 0 on terminal states, synchronous sweeps, stop after the first sweep
 * whose largest change is below `tol`. Pure; no I/O; one scratch row allocated per solve.
 */
import { InputError } from "../errors.js";
import type { FiniteModel } from "../model/types.js";
import { expectedPerStateAction } from "../model/reward.js";
import { policyValues } from "./default-solver.js";
import { startValue, uniformPolicy } from "./policy.js";
import { iterateSweeps, type Policy, type SolveOptions } from "./sweeps.js";

export interface SoftOptions extends SolveOptions {
  /** Inverse temperature, >= 0 (Infinity allowed). */
  beta: number;
  /** Reference policy pi0 (nStates * nActions). Default: uniform. */
  reference?: Policy;
}

export interface KlFromReference {
  /** KL(pi(.|s) || pi0(.|s)) per state (0 on terminal states; Infinity where pi leaves the support of pi0). */
  perState: Float64Array;
  /** K(s) = E[sum_t gamma^t KL(s_t) | s_0 = s] under pi. */
  values: Float64Array;
  /** sum_s start(s) K(s). */
  start: number;
}

export interface SoftSolution {
  beta: number;
  /** The soft-optimal policy, nStates * nActions probabilities (terminal rows: the reference row). */
  policy: Policy;
  /** Soft values V(s) (0 on terminals). */
  values: Float64Array;
  /** Q(s, a) from the final values (0 on terminals). */
  q: Float64Array;
  iters: number;
  converged: boolean;
  /** KL of the soft policy from the reference (see klFromReference). */
  kl: KlFromReference;
}

const DEFAULT_TOL = 1e-10;

function checkPolicy(model: FiniteModel, p: Policy, what: string): void {
  const nA = model.nActions;
  if (p.length !== model.nStates * nA) {
    throw new InputError("input.policy", `${what} has ${p.length} entries, expected nStates * nActions = ${model.nStates * nA}`, what);
  }
  for (let s = 0; s < model.nStates; s++) {
    if (model.terminal[s]) continue;
    let sum = 0;
    for (let a = 0; a < nA; a++) {
      const x = p[s * nA + a];
      if (!(x >= 0)) throw new InputError("input.policy", `${what} has probability ${x} at state ${s} action ${a}`, what);
      sum += x;
    }
    if (Math.abs(sum - 1) > 1e-9) throw new InputError("input.policy", `${what} row of state ${s} sums to ${sum}, expected 1`, what);
  }
}

/** KL-regularized soft value iteration. */
export function softValueIteration(model: FiniteModel, reward: Float64Array, opts: SoftOptions): SoftSolution {
  const beta = opts.beta;
  if (!(beta >= 0)) throw new InputError("input.beta", `beta must be >= 0, got ${beta}`, "soft value iteration");
  const gamma = opts.gamma ?? model.gamma;
  const tol = opts.tol ?? DEFAULT_TOL;
  const maxIters = opts.maxIters ?? (gamma < 1 ? Math.max(10_000, Math.ceil(Math.log(1e-12) / Math.log(gamma)) * 4) : 1_000_000);
  const nS = model.nStates;
  const nA = model.nActions;
  if (reward.length !== model.next.length) {
    throw new InputError("input.reward", `reward has ${reward.length} entries, expected one per outcome (${model.next.length})`, "soft value iteration");
  }
  const ref = opts.reference ?? uniformPolicy(model);
  if (opts.reference) checkPolicy(model, ref, "reference policy");
  const r = expectedPerStateAction(model, reward);
  const { saStart, next, prob, terminal } = model;
  const row = new Float64Array(nA);
  const { values: V, iters, converged } = iterateSweeps(nS, tol, maxIters, false, (V, W) => {
    let delta = 0;
    for (let s = 0; s < nS; s++) {
      if (terminal[s]) {
        W[s] = 0;
        continue;
      }
      const k0 = s * nA;
      for (let a = 0; a < nA; a++) {
        const k = k0 + a;
        let ev = 0;
        for (let o = saStart[k]; o < saStart[k + 1]; o++) ev += prob[o] * V[next[o]];
        row[a] = r[k] + gamma * ev;
      }
      const v = softBackup(row, ref, k0, nA, beta);
      const d = Math.abs(v - V[s]);
      if (d > delta) delta = d;
      W[s] = v;
    }
    return delta;
  });
  // Final Q and policy from the converged values.
  const q = new Float64Array(nS * nA);
  const policy = new Float64Array(nS * nA);
  for (let s = 0; s < nS; s++) {
    const k0 = s * nA;
    if (terminal[s]) {
      for (let a = 0; a < nA; a++) policy[k0 + a] = ref[k0 + a];
      continue;
    }
    for (let a = 0; a < nA; a++) {
      const k = k0 + a;
      let ev = 0;
      for (let o = saStart[k]; o < saStart[k + 1]; o++) ev += prob[o] * V[next[o]];
      q[k] = r[k] + gamma * ev;
    }
    softPolicyRow(q, ref, k0, nA, beta, policy);
  }
  const kl = klFromReference(model, policy, ref, gamma, { tol: Math.min(tol, 1e-12) });
  return { beta, policy, values: V, q, iters, converged, kl };
}

/** (1/beta) log sum_a pi0(a) exp(beta q_a), stable; beta = 0: sum_a pi0 q_a; beta = Infinity: max over support. */
function softBackup(row: Float64Array, ref: Policy, k0: number, nA: number, beta: number): number {
  if (beta === 0) {
    let v = 0;
    for (let a = 0; a < nA; a++) {
      const p = ref[k0 + a];
      if (p !== 0) v += p * row[a];
    }
    return v;
  }
  let m = -Infinity;
  for (let a = 0; a < nA; a++) if (ref[k0 + a] > 0 && row[a] > m) m = row[a];
  if (beta === Infinity) return m;
  let sum = 0;
  for (let a = 0; a < nA; a++) {
    const p = ref[k0 + a];
    if (p > 0) sum += p * Math.exp(beta * (row[a] - m));
  }
  return m + Math.log(sum) / beta;
}

function softPolicyRow(q: Float64Array, ref: Policy, k0: number, nA: number, beta: number, out: Float64Array): void {
  if (beta === 0) {
    for (let a = 0; a < nA; a++) out[k0 + a] = ref[k0 + a];
    return;
  }
  let m = -Infinity;
  for (let a = 0; a < nA; a++) if (ref[k0 + a] > 0 && q[k0 + a] > m) m = q[k0 + a];
  if (beta === Infinity) {
    // Uniform over the reference-supported maximizers.
    let c = 0;
    for (let a = 0; a < nA; a++) if (ref[k0 + a] > 0 && q[k0 + a] === m) c++;
    for (let a = 0; a < nA; a++) out[k0 + a] = ref[k0 + a] > 0 && q[k0 + a] === m ? 1 / c : 0;
    return;
  }
  let z = 0;
  for (let a = 0; a < nA; a++) {
    const p = ref[k0 + a];
    const w = p > 0 ? p * Math.exp(beta * (q[k0 + a] - m)) : 0;
    out[k0 + a] = w;
    z += w;
  }
  for (let a = 0; a < nA; a++) out[k0 + a] /= z;
}

/**
 * KL divergence of `policy` from `ref`, per state and accumulated with discount `gamma` along the
 * policy's own trajectories (see the module comment). Default gamma: the model's.
 */
export function klFromReference(model: FiniteModel, policy: Policy, ref: Policy, gamma = model.gamma, opts: { tol?: number } = {}): KlFromReference {
  checkPolicy(model, policy, "policy");
  checkPolicy(model, ref, "reference policy");
  const nS = model.nStates;
  const nA = model.nActions;
  const perState = new Float64Array(nS);
  for (let s = 0; s < nS; s++) {
    if (model.terminal[s]) continue;
    let kl = 0;
    for (let a = 0; a < nA; a++) {
      const p = policy[s * nA + a];
      if (p === 0) continue;
      const p0 = ref[s * nA + a];
      kl += p0 > 0 ? p * Math.log(p / p0) : Infinity;
    }
    // Rounding can make a zero divergence slightly negative.
    perState[s] = kl > 0 ? kl : 0;
  }
  // A per-outcome "reward" equal to KL(s) on every outcome of s: its expectation under pi is KL(s).
  const cost = new Float64Array(model.next.length);
  for (let s = 0; s < nS; s++) {
    const k = perState[s];
    if (k === 0) continue;
    for (let o = model.saStart[s * nA]; o < model.saStart[(s + 1) * nA]; o++) cost[o] = k;
  }
  const values = policyValues(model, cost, policy, { gamma, tol: opts.tol ?? 1e-12, accuracy: opts.tol ?? 1e-12 }).values;
  return { perState, values, start: startValue(model, values) };
}
