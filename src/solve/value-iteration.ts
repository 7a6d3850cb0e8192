/**
 * Value iteration (Sutton & Barto 2018, section 4.4): the sweep tables and the monomorphic range-sweep
 * kernels the single-threaded and parallel solvers share. The kernels are benchmarked; change them
 * only with the bench's checksums in view. Pure; no I/O.
 */
import type { FiniteModel } from "../model/types.js";
import { actionValues, DEFAULT_TOL, defaultMaxIters, expectedReward, greedyActions, iterateSweeps, type Evaluation, type SolveOptions, type Solution } from "./sweeps.js";

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
  const tables = sweepTables(model, plan);
  const sweep = rangeSweepFor(tables);
  const n = plan.live.length;
  // Terminal entries are never written, so they stay 0 in both buffers.
  return iterateSweeps(model.nStates, tol, maxIters, opts.inPlace === true, (V, W) => sweep(tables, gamma, V, W, 0, n));
}

/**
 * The arrays one sweep reads: the `sweepPlan` tables plus the model's outcome arrays. Single-threaded
 * sweeps pass the model's own arrays; the parallel solver (parallel.ts) passes copies in shared memory.
 * `liveNext` / `liveReward` are set for deterministic models, else the outcome arrays are used.
 */
export interface SweepTables {
  nActions: number;
  live: Int32Array;
  liveNext: Int32Array | null;
  liveReward: Float64Array | null;
  expected: Float64Array | null;
  saStart: Int32Array | null;
  next: Int32Array | null;
  prob: Float64Array | null;
}

export function sweepTables(model: FiniteModel, plan: SweepPlan): SweepTables {
  return {
    nActions: model.nActions,
    live: plan.live,
    liveNext: plan.liveNext,
    liveReward: plan.liveReward,
    expected: plan.expected,
    saStart: model.saStart,
    next: model.next,
    prob: model.prob,
  };
}

/**
 * One Bellman-optimality sweep over live indices lo .. hi - 1, reading V and writing W (may be V
 * itself); returns the largest |W - V|. Each kind is its own monomorphic function so the JIT compiles a
 * tight loop; all compute exactly r(s, a) + gamma * (sum_o p_o V(next_o)) in the same order, so any
 * split of the range (parallel.ts) gives bit-identical values.
 */
export type RangeSweep = (t: SweepTables, gamma: number, V: Float64Array, W: Float64Array, lo: number, hi: number) => number;

function backupTables(t: SweepTables, gamma: number, V: Float64Array, k: number): number {
  const saStart = t.saStart as Int32Array;
  const next = t.next as Int32Array;
  const prob = t.prob as Float64Array;
  const r = t.expected as Float64Array;
  const lo = saStart[k];
  const hi = saStart[k + 1];
  if (hi - lo === 1) return r[k] + gamma * V[next[lo]];
  let ev = 0;
  for (let o = lo; o < hi; o++) ev += prob[o] * V[next[o]];
  return r[k] + gamma * ev;
}

export const sweepRangeGeneral: RangeSweep = (t, gamma, V, W, lo, hi) => {
  const nA = t.nActions;
  const live = t.live;
  let delta = 0;
  for (let i = lo; i < hi; i++) {
    const s = live[i];
    const k0 = s * nA;
    let best = backupTables(t, gamma, V, k0);
    for (let a = 1; a < nA; a++) {
      const q = backupTables(t, gamma, V, k0 + a);
      if (q > best) best = q;
    }
    const d = Math.abs(best - V[s]);
    if (d > delta) delta = d;
    W[s] = best;
  }
  return delta;
};

export const sweepRangeDeterministic: RangeSweep = (t, gamma, V, W, lo, hi) => {
  const nA = t.nActions;
  const live = t.live;
  const next = t.liveNext as Int32Array;
  const r = t.liveReward as Float64Array;
  let delta = 0;
  for (let i = lo; i < hi; i++) {
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
export const sweepRangeDeterministic4: RangeSweep = (t, gamma, V, W, lo, hi) => {
  const live = t.live;
  const next = t.liveNext as Int32Array;
  const r = t.liveReward as Float64Array;
  let delta = 0;
  for (let i = lo; i < hi; i++) {
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

/** The sweep kind for a set of tables. */
export function rangeSweepFor(t: SweepTables): RangeSweep {
  return t.liveNext ? (t.nActions === 4 ? sweepRangeDeterministic4 : sweepRangeDeterministic) : sweepRangeGeneral;
}

/** Value iteration (Sutton & Barto 2018, section 4.4), synchronous sweeps by default. */
export function valueIteration(model: FiniteModel, reward: Float64Array, opts: SolveOptions = {}): Solution {
  const gamma = opts.gamma ?? model.gamma;
  const ev = valueSweeps(model, reward, opts);
  const q = actionValues(model, reward, ev.values, gamma);
  return { ...ev, policy: greedyActions(model, q), q };
}
