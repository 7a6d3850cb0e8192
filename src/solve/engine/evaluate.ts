/**
 * Policy evaluation by components: v_pi = r_pi + gamma P_pi v_pi solved one strongly connected
 * component of the policy's chain at a time, sinks first (order.ts), each with the values of the
 * states it can leave to already final.
 *
 * Per component (m states):
 *  - m = 1: closed form v = (r + gamma * sum_j w_j v_j) / (1 - gamma * p_self): one backup, exact.
 *  - m <= directMax (64): dense Gaussian elimination on (I - gamma P_in) v = r + gamma P_out v_out
 *    (dense.ts); exact up to rounding.
 *  - gamma < 1: `evaluateFixedPoint` of dp.ts (Gauss-Seidel / SOR with its proven stopping bound
 *    gamma / (1 - gamma) * |Tx - x|) on the component's own chain, rows in the order of order.ts and
 *    the exits folded into the reward.
 *  - gamma = 1: Gauss-Seidel sweeps, forward and backward in that order, stopped by a certificate:
 *    with P the in-component part of P_pi (substochastic: a component with an exit is left with
 *    probability 1), x - v = (I - P)^{-1} (x - T x), so |x - v| <= max tau * |T x - x| where
 *    tau = (I - P)^{-1} 1 is the expected number of steps before leaving (Puterman 1994, section 7.2;
 *    Bertsekas & Tsitsiklis 1996, section 2.2; from memory). tau is computed by the same sweeps and
 *    certified as an upper bound (types.ts `certifiedTauMax`). A component without exits under
 *    gamma = 1 never ends: its values are finite (0) only if its rewards are all 0; otherwise NaN and
 *    `converged` false.
 */
import type { FiniteModel } from "../../model/types.js";
import { chainReward, evaluateFixedPoint, policyChain, type PolicyChain } from "../evaluation.js";
import type { Policy } from "../sweeps.js";
import { solveDense } from "./dense.js";
import { solveOrder } from "./order.js";
import { regionChain, regionOrder, regionReward } from "./region.js";
import { fillOver, maxOver, undiscountedSweeps, type ComponentResult, type ComponentSweeps } from "./sweeps.js";
import {
  componentError,
  componentTarget,
  emptyStats,
  resolveOptions,
  type EngineOptions,
  type EngineResult,
  type ResolvedOptions,
} from "./types.js";

/** Row i of the chain leaks probability to terminal states (its weights sum to less than 1). */
function chainExits(chain: PolicyChain): Uint8Array {
  const n = chain.states.length;
  const exits = new Uint8Array(n);
  for (let i = 0; i < n; i++) {
    let acc = chain.self[i];
    for (let e = chain.rowStart[i]; e < chain.rowStart[i + 1]; e++) acc += chain.weight[e];
    if (acc < 1 - 1e-12) exits[i] = 1;
  }
  return exits;
}

/** v_pi of a stochastic policy by components (see the file comment). Values are state-indexed. */
export function evaluatePolicyEngine(model: FiniteModel, reward: Float64Array, policy: Policy, opts: EngineOptions = {}): EngineResult {
  return evaluatePolicyEngineMany(model, [reward], policy, opts)[0];
}

/** `evaluatePolicyEngine` for several rewards under one policy, sharing the chain and its order. */
export function evaluatePolicyEngineMany(model: FiniteModel, rewards: Float64Array[], policy: Policy, opts: EngineOptions = {}): EngineResult[] {
  const o = resolveOptions(model.gamma, opts);
  const chain = policyChain(model, policy);
  const order = solveOrder({ n: chain.states.length, rowStart: chain.rowStart, col: chain.col }, chainExits(chain));
  return rewards.map((reward) => {
    const r = chainReward(model, chain, policy, reward);
    const res = solveChain(chain, r, order, o);
    const values = new Float64Array(model.nStates);
    for (let i = 0; i < chain.states.length; i++) values[chain.states[i]] = res.values[i];
    return { ...res, values };
  });
}

/**
 * Re-solving a deterministic policy's values on some live states only: `states` are re-solved with
 * every other state's value held at its entry in `xs[j]` (state-indexed, 0 on terminal states; the
 * re-solved entries are written in place), for each expected reward per (s, a) `rewards[j]`. When a
 * policy changes its action in a few states, the values that change are those of the states that reach
 * a changed state under the new policy (every other state's successors, and theirs, are unchanged), so
 * re-solving that set with the rest held gives the new policy's values at the cost of the set, not of
 * the model. Each call is solved to `accuracy` given the held values (components as in
 * `evaluatePolicyEngineMany`). `scratch`: an Int32Array(model.nStates) filled with -1, restored on return.
 */
export function evaluateOnStates(
  model: FiniteModel,
  actions: Int32Array,
  states: Int32Array,
  rewards: Float64Array[],
  xs: Float64Array[],
  opts: EngineOptions,
  scratch: Int32Array,
): { converged: boolean; errorBound: number } {
  const o = resolveOptions(model.gamma, opts);
  const choice = { actions };
  const region = regionChain(model, choice, states, scratch);
  const { chain } = region;
  const n = states.length;
  const rs = rewards.map((rsa, j) => regionReward(model, choice, region, { perAction: rsa }, xs[j], o.gamma));
  const order = regionOrder(region);
  let converged = true;
  let errorBound = 0;
  for (let j = 0; j < rewards.length; j++) {
    const res = solveChain(chain, rs[j], order, o);
    const x = xs[j];
    for (let i = 0; i < n; i++) x[states[i]] = res.values[i];
    if (!res.converged) converged = false;
    errorBound = Math.max(errorBound, res.errorBound);
  }
  return { converged, errorBound };
}

export type Order = ReturnType<typeof solveOrder>;

/** The component loop in row space: values per row of `chain` for the row rewards `r`, components in `order`. */
export function solveChain(chain: PolicyChain, r: Float64Array, order: Order, o: ResolvedOptions): EngineResult {
  const n = r.length;
  const { rowStart, col, weight, self } = chain;
  const { members, compStart, comp, count } = order;
  const gamma = o.gamma;
  const x = new Float64Array(n);
  const stats = emptyStats(count, order.largest);
  const err = new Float64Array(count);
  let iterative = 0;
  for (let c = 0; c < count; c++) if (compStart[c + 1] - compStart[c] > Math.max(1, o.directMax)) iterative++;
  const dm = Math.max(1, o.directMax);
  // Buffers of the components of more than one state, allocated on first use (all singletons is common).
  let dense: Float64Array | null = null;
  let rhs: Float64Array | null = null;
  let local: Int32Array | null = null;
  const scratch: Scratch = { tau: null, ones: null };
  let converged = true;
  let bound = 0;
  for (let c = 0; c < count; c++) {
    const lo = compStart[c];
    const hi = compStart[c + 1];
    const m = hi - lo;
    // Largest error among the exits' components (already solved; skipped while every error is 0).
    let errIn = 0;
    for (let q = lo; bound > 0 && q < hi; q++) {
      const i = members[q];
      for (let e = rowStart[i]; e < rowStart[i + 1]; e++) {
        const cj = comp[col[e]];
        if (cj !== c && err[cj] > errIn) errIn = err[cj];
      }
    }
    let localErr = 0;
    if (m === 1) {
      const i = members[lo];
      stats.singletons++;
      stats.backups++;
      let acc = 0;
      for (let e = rowStart[i]; e < rowStart[i + 1]; e++) acc += weight[e] * x[col[e]];
      const stay = 1 - gamma * self[i];
      if (stay > 0) x[i] = (r[i] + gamma * acc) / stay;
      else if (r[i] === 0) x[i] = 0;
      else {
        x[i] = NaN;
        converged = false;
      }
    } else {
      local ??= new Int32Array(n).fill(-1);
      const part = m <= o.directMax || gamma < 1 ? componentChain(chain, r, gamma, x, members, lo, hi, local) : null;
      if (part && m <= o.directMax && denseComponent(part, gamma, x, members, lo, (dense ??= new Float64Array(dm * dm)), (rhs ??= new Float64Array(dm)))) {
        stats.directSolves++;
        stats.backups += m;
      } else {
        const target = componentTarget(o, errIn, iterative);
        const res =
          part && gamma < 1
            ? fixedPointComponent(part, gamma, x, members, lo, target, o.maxSweeps)
            : undiscountedComponent(chain, r, x, members, lo, hi, order.closed[c] === 0, target, o.maxSweeps, scratch);
        stats.backups += res.backups;
        localErr = res.bound;
        if (!res.converged) converged = false;
      }
    }
    err[c] = componentError(o, localErr, errIn);
    if (err[c] > bound) bound = err[c];
  }
  return { values: x, converged, errorBound: bound, stats };
}

/**
 * One component as a chain of its own: rows in solve order (members[lo..hi)), columns local, and the
 * successors outside the component (already solved) folded into the reward: r_i + gamma sum w_ij x_j.
 */
function componentChain(chain: PolicyChain, r: Float64Array, gamma: number, x: Float64Array, members: Int32Array, lo: number, hi: number, local: Int32Array): { sub: PolicyChain; r: Float64Array } {
  const m = hi - lo;
  const { rowStart, col, weight, self } = chain;
  for (let q = 0; q < m; q++) local[members[lo + q]] = q;
  let nnz = 0;
  for (let q = lo; q < hi; q++) nnz += rowStart[members[q] + 1] - rowStart[members[q]];
  const subStart = new Int32Array(m + 1);
  const subCol = new Int32Array(nnz);
  const subWeight = new Float64Array(nnz);
  const subSelf = new Float64Array(m);
  const rl = new Float64Array(m);
  let f = 0;
  for (let q = 0; q < m; q++) {
    const i = members[lo + q];
    subStart[q] = f;
    subSelf[q] = self[i];
    let acc = r[i];
    for (let e = rowStart[i]; e < rowStart[i + 1]; e++) {
      const lj = local[col[e]];
      if (lj >= 0) {
        subCol[f] = lj;
        subWeight[f++] = weight[e];
      } else acc += gamma * weight[e] * x[col[e]];
    }
    rl[q] = acc;
  }
  subStart[m] = f;
  for (let q = 0; q < m; q++) local[members[lo + q]] = -1;
  const sub = { nStates: m, states: members.subarray(lo, hi), rowStart: subStart, col: subCol.subarray(0, f), weight: subWeight.subarray(0, f), self: subSelf };
  return { sub, r: rl };
}

/** Dense solve of (I - gamma P_in) v = r_in for one component; false if singular (x untouched). */
function denseComponent(part: { sub: PolicyChain; r: Float64Array }, gamma: number, x: Float64Array, members: Int32Array, lo: number, a: Float64Array, b: Float64Array): boolean {
  const { sub, r } = part;
  const m = r.length;
  a.fill(0, 0, m * m);
  for (let q = 0; q < m; q++) {
    a[q * m + q] = 1 - gamma * sub.self[q];
    for (let e = sub.rowStart[q]; e < sub.rowStart[q + 1]; e++) a[q * m + sub.col[e]] -= gamma * sub.weight[e];
    b[q] = r[q];
  }
  if (!solveDense(a, b, m)) return false;
  for (let q = 0; q < m; q++) x[members[lo + q]] = b[q];
  return true;
}

/** gamma < 1: the component's own chain solved by dp.ts's fixed-point evaluator (rows in solve order). */
function fixedPointComponent(part: { sub: PolicyChain; r: Float64Array }, gamma: number, x: Float64Array, members: Int32Array, lo: number, target: number, maxSweeps: number): ComponentResult {
  const m = part.r.length;
  const ev = evaluateFixedPoint(part.sub, part.r, gamma, target, maxSweeps);
  for (let q = 0; q < m; q++) x[members[lo + q]] = ev.values[q];
  return { bound: ev.errorBound, converged: ev.converged, backups: ev.iters * m };
}

/** Buffers of the gamma = 1 path, allocated on first use: expected exit times and a vector of ones. */
interface Scratch {
  tau: Float64Array | null;
  ones: Float64Array | null;
}

/**
 * One Gauss-Seidel sweep over members[lo..hi) (backward: hi-1 down to lo), each row solved for its
 * own value (self-loop on the left): y_i = (r_i + gamma sum_j w_ij y_j) / (1 - gamma p_ii).
 * Returns the largest change.
 */
function gsSweep(chain: PolicyChain, r: Float64Array, gamma: number, x: Float64Array, members: Int32Array, lo: number, hi: number, backward: boolean): number {
  const { rowStart, col, weight, self } = chain;
  let delta = 0;
  const step = backward ? -1 : 1;
  const end = backward ? lo - 1 : hi;
  for (let q = backward ? hi - 1 : lo; q !== end; q += step) {
    const i = members[q];
    let acc = 0;
    for (let e = rowStart[i]; e < rowStart[i + 1]; e++) acc += weight[e] * x[col[e]];
    const v = (r[i] + gamma * acc) / (1 - gamma * self[i]);
    const d = Math.abs(v - x[i]);
    if (d > delta) delta = d;
    x[i] = v;
  }
  return delta;
}

/** Over members[lo..hi): the largest signed (r + gamma P x - x)_i and the largest absolute one. */
function chainResidual(chain: PolicyChain, r: Float64Array, gamma: number, x: Float64Array, members: Int32Array, lo: number, hi: number): { max: number; abs: number } {
  const { rowStart, col, weight, self } = chain;
  let max = -Infinity;
  let abs = 0;
  for (let q = lo; q < hi; q++) {
    const i = members[q];
    let acc = self[i] * x[i];
    for (let e = rowStart[i]; e < rowStart[i + 1]; e++) acc += weight[e] * x[col[e]];
    const d = r[i] + gamma * acc - x[i];
    if (d > max) max = d;
    if (Math.abs(d) > abs) abs = Math.abs(d);
  }
  return { max, abs };
}

/** The chain's loops over one component, for the shared drivers of sweeps.ts. */
function chainSweeps(chain: PolicyChain, gamma: number, members: Int32Array, lo: number, hi: number): ComponentSweeps {
  return {
    m: hi - lo,
    sweep: (r, x, backward) => gsSweep(chain, r, gamma, x, members, lo, hi, backward),
    residual: (r, x) => chainResidual(chain, r, gamma, x, members, lo, hi),
    maxOf: (x) => maxOver(x, members, lo, hi),
    fill: (x, v) => fillOver(x, members, lo, hi, v),
  };
}

/** gamma = 1, a component of more than directMax states: see the file comment. */
function undiscountedComponent(chain: PolicyChain, r: Float64Array, x: Float64Array, members: Int32Array, lo: number, hi: number, exits: boolean, target: number, maxSweeps: number, s: Scratch): ComponentResult {
  if (!exits) {
    // No exit: v = r + P v has a finite solution only with zero rewards (then v = 0).
    let allZero = true;
    for (let q = lo; q < hi; q++) if (r[members[q]] !== 0) allZero = false;
    fillOver(x, members, lo, hi, allZero ? 0 : NaN);
    return { bound: allZero ? 0 : Infinity, converged: allZero, backups: 0 };
  }
  const n = r.length;
  const tau = (s.tau ??= new Float64Array(n));
  const ones = (s.ones ??= new Float64Array(n).fill(1));
  return undiscountedSweeps(chainSweeps(chain, 1, members, lo, hi), r, x, ones, tau, true, target, maxSweeps);
}
