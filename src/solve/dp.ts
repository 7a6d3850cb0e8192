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
}

export interface Evaluation {
  values: Float64Array;
  iters: number;
  converged: boolean;
}

export interface Solution extends Evaluation {
  /** Greedy action per state (lowest index on ties); -1 on terminal states. */
  policy: Int32Array;
  /** Action values, nStates * nActions. */
  q: Float64Array;
}

const DEFAULT_TOL = 1e-10;

function defaultMaxIters(gamma: number): number {
  return gamma < 1 ? Math.max(10_000, Math.ceil(Math.log(1e-12) / Math.log(gamma)) * 4) : 1_000_000;
}

/** Expected immediate reward per (s, a) and the outcome structure, precomputed once per solve. */
export function expectedReward(model: FiniteModel, reward: Float64Array): Float64Array {
  const nSA = model.nStates * model.nActions;
  const r = new Float64Array(nSA);
  const { saStart, prob } = model;
  for (let k = 0; k < nSA; k++) {
    const lo = saStart[k];
    const hi = saStart[k + 1];
    if (hi - lo === 1) {
      r[k] = reward[lo];
      continue;
    }
    let acc = 0;
    for (let o = lo; o < hi; o++) acc += prob[o] * reward[o];
    r[k] = acc;
  }
  return r;
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

/** Iterative policy evaluation of a stochastic policy (Sutton & Barto 2018, section 4.1). */
export function evaluatePolicy(model: FiniteModel, reward: Float64Array, policy: Policy, opts: SolveOptions = {}): Evaluation {
  const gamma = opts.gamma ?? model.gamma;
  const tol = opts.tol ?? DEFAULT_TOL;
  const maxIters = opts.maxIters ?? defaultMaxIters(gamma);
  const nS = model.nStates;
  const nA = model.nActions;
  const r = expectedReward(model, reward);
  let V = new Float64Array(nS);
  let W = opts.inPlace ? V : new Float64Array(nS);
  let iters = 0;
  let converged = false;
  while (iters < maxIters) {
    let delta = 0;
    for (let s = 0; s < nS; s++) {
      if (model.terminal[s]) {
        W[s] = 0;
        continue;
      }
      let v = 0;
      for (let a = 0; a < nA; a++) {
        const pa = policy[s * nA + a];
        if (pa !== 0) v += pa * backup(model, r, gamma, V, s * nA + a);
      }
      const d = Math.abs(v - V[s]);
      if (d > delta) delta = d;
      W[s] = v;
    }
    iters++;
    if (!opts.inPlace) {
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

/**
 * Tables for value-iteration sweeps, built once per (model, reward) in one O(outcomes) pass: the
 * expected reward per (s, a), the non-terminal states in increasing order, and for deterministic
 * models (one outcome per pair) the successor and reward of each live (state, action) packed
 * contiguously, so a sweep streams through them without touching terminal flags or outcome ranges.
 */
export interface SweepPlan {
  readonly expected: Float64Array;
  readonly live: Int32Array;
  /** Deterministic models: next state of (live[i], a) at i * nActions + a; otherwise null. */
  readonly liveNext: Int32Array | null;
  /** Deterministic models: reward of (live[i], a) at i * nActions + a; otherwise null. */
  readonly liveReward: Float64Array | null;
}

export function sweepPlan(model: FiniteModel, reward: Float64Array): SweepPlan {
  const nS = model.nStates;
  const nA = model.nActions;
  const expected = expectedReward(model, reward);
  let nLive = 0;
  for (let s = 0; s < nS; s++) if (!model.terminal[s]) nLive++;
  const live = new Int32Array(nLive);
  for (let s = 0, i = 0; s < nS; s++) if (!model.terminal[s]) live[i++] = s;
  if (model.saStart[nS * nA] !== nS * nA) return { expected, live, liveNext: null, liveReward: null };
  // One outcome per pair: outcome index k = s * nA + a.
  const liveNext = new Int32Array(nLive * nA);
  const liveReward = new Float64Array(nLive * nA);
  for (let i = 0; i < nLive; i++) {
    const k0 = live[i] * nA;
    for (let a = 0; a < nA; a++) {
      liveNext[i * nA + a] = model.next[k0 + a];
      liveReward[i * nA + a] = expected[k0 + a];
    }
  }
  return { expected, live, liveNext, liveReward };
}

/**
 * The sweeps of value iteration alone (no action values, no greedy policy): what the benchmark times.
 * Pass a `sweepPlan(model, reward)` built beforehand to keep that one-off pass out of a timed region.
 */
export function valueSweeps(model: FiniteModel, reward: Float64Array, opts: SolveOptions = {}, plan: SweepPlan = sweepPlan(model, reward)): Evaluation {
  const gamma = opts.gamma ?? model.gamma;
  const tol = opts.tol ?? DEFAULT_TOL;
  const maxIters = opts.maxIters ?? defaultMaxIters(gamma);
  const nS = model.nStates;
  const nA = model.nActions;
  // Each sweep kind is its own monomorphic function so the JIT compiles a tight loop; all compute
  // exactly the same floating-point expression, r(s, a) + gamma * (sum_o p_o V(next_o)), in the same order.
  const sweep = plan.liveNext ? (nA === 4 ? sweepDeterministic4 : sweepDeterministic) : sweepGeneral;
  let V = new Float64Array(nS);
  let W = opts.inPlace ? V : new Float64Array(nS);
  let iters = 0;
  let converged = false;
  while (iters < maxIters) {
    // Terminal entries are never written, so they stay 0 in both buffers.
    const delta = sweep(model, plan, gamma, V, W);
    iters++;
    if (!opts.inPlace) {
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

/** One Bellman-optimality sweep over the live states reading V, writing W (may be V itself); returns max |W - V|. */
type Sweep = (model: FiniteModel, plan: SweepPlan, gamma: number, V: Float64Array, W: Float64Array) => number;

const sweepGeneral: Sweep = (model, plan, gamma, V, W) => {
  const nA = model.nActions;
  const { live, expected: r } = plan;
  const n = live.length;
  let delta = 0;
  for (let i = 0; i < n; i++) {
    const s = live[i];
    const k0 = s * nA;
    let best = backup(model, r, gamma, V, k0);
    for (let a = 1; a < nA; a++) {
      const q = backup(model, r, gamma, V, k0 + a);
      if (q > best) best = q;
    }
    const d = Math.abs(best - V[s]);
    if (d > delta) delta = d;
    W[s] = best;
  }
  return delta;
};

const sweepDeterministic: Sweep = (model, plan, gamma, V, W) => {
  const nA = model.nActions;
  const live = plan.live;
  const next = plan.liveNext as Int32Array;
  const r = plan.liveReward as Float64Array;
  const n = live.length;
  let delta = 0;
  for (let i = 0; i < n; i++) {
    const s = live[i];
    const k0 = i * nA;
    let best = r[k0] + gamma * V[next[k0]];
    for (let a = 1; a < nA; a++) {
      const q = r[k0 + a] + gamma * V[next[k0 + a]];
      if (q > best) best = q;
    }
    const d = Math.abs(best - V[s]);
    if (d > delta) delta = d;
    W[s] = best;
  }
  return delta;
};

/** Four actions (grid worlds), unrolled: about twice as fast as the loop under V8. */
const sweepDeterministic4: Sweep = (_model, plan, gamma, V, W) => {
  const live = plan.live;
  const next = plan.liveNext as Int32Array;
  const r = plan.liveReward as Float64Array;
  const n = live.length;
  let delta = 0;
  for (let i = 0; i < n; i++) {
    const s = live[i];
    const k = i << 2;
    let best = r[k] + gamma * V[next[k]];
    const q1 = r[k + 1] + gamma * V[next[k + 1]];
    const q2 = r[k + 2] + gamma * V[next[k + 2]];
    const q3 = r[k + 3] + gamma * V[next[k + 3]];
    if (q1 > best) best = q1;
    if (q2 > best) best = q2;
    if (q3 > best) best = q3;
    const d = Math.abs(best - V[s]);
    if (d > delta) delta = d;
    W[s] = best;
  }
  return delta;
};

/** Value iteration (Sutton & Barto 2018, section 4.4), synchronous sweeps by default. */
export function valueIteration(model: FiniteModel, reward: Float64Array, opts: SolveOptions = {}): Solution {
  const gamma = opts.gamma ?? model.gamma;
  const ev = valueSweeps(model, reward, opts);
  const q = actionValues(model, reward, ev.values, gamma);
  return { ...ev, policy: greedyActions(model, q), q };
}

/** Q = r + gamma * P V for every (s, a); zeros on terminal states. */
export function actionValues(model: FiniteModel, reward: Float64Array, V: Float64Array, gamma = model.gamma): Float64Array {
  const nA = model.nActions;
  const r = expectedReward(model, reward);
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

/** Policy iteration (Sutton & Barto 2018, section 4.3) from the all-zeros policy. */
export function policyIteration(model: FiniteModel, reward: Float64Array, opts: SolveOptions & { maxPolicyIters?: number } = {}): Solution & { policyIters: number } {
  const gamma = opts.gamma ?? model.gamma;
  let actions = new Int32Array(model.nStates);
  for (let s = 0; s < model.nStates; s++) actions[s] = model.terminal[s] ? -1 : 0;
  let policyIters = 0;
  let totalIters = 0;
  const maxPolicyIters = opts.maxPolicyIters ?? 1000;
  for (;;) {
    const ev = evaluatePolicy(model, reward, deterministicPolicy(model, actions), { ...opts, gamma, tol: opts.tol ?? 1e-12 });
    totalIters += ev.iters;
    const q = actionValues(model, reward, ev.values, gamma);
    // Improve, keeping the current action unless another is better by more than a rounding margin.
    const improved = new Int32Array(model.nStates);
    let stable = true;
    const nA = model.nActions;
    for (let s = 0; s < model.nStates; s++) {
      if (model.terminal[s]) {
        improved[s] = -1;
        continue;
      }
      let best = actions[s];
      for (let a = 0; a < nA; a++) if (q[s * nA + a] > q[s * nA + best] + 1e-9 * (1 + Math.abs(q[s * nA + best]))) best = a;
      improved[s] = best;
      if (best !== actions[s]) stable = false;
    }
    policyIters++;
    actions = improved;
    if (stable || policyIters >= maxPolicyIters) {
      return { values: ev.values, iters: totalIters, converged: stable, policy: actions, q, policyIters };
    }
  }
}

/** One-hot policy from an action per state (terminal rows: uniform, never used). */
export function deterministicPolicy(model: FiniteModel, actions: Int32Array): Policy {
  const nA = model.nActions;
  const p = new Float64Array(model.nStates * nA);
  for (let s = 0; s < model.nStates; s++) {
    const a = actions[s];
    if (a >= 0) p[s * nA + a] = 1;
    else for (let b = 0; b < nA; b++) p[s * nA + b] = 1 / nA;
  }
  return p;
}

/** The uniform-random policy. */
export function uniformPolicy(model: FiniteModel): Policy {
  return new Float64Array(model.nStates * model.nActions).fill(1 / model.nActions);
}

/** Expected return from the start distribution: sum_s start(s) V(s). */
export function startValue(model: FiniteModel, values: Float64Array): number {
  let acc = 0;
  for (let s = 0; s < model.nStates; s++) if (model.start[s] > 0) acc += model.start[s] * values[s];
  return acc;
}
