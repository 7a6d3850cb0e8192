/**
 * Value iteration by components: v* = max_a (r_a + gamma P_a v*) solved one strongly connected
 * component of the all-actions graph at a time (an edge s -> s' wherever some action reaches s' with
 * positive probability), sinks first, so every state a component can leave to is already final
 * (order.ts; Tarjan 1972 for the components).
 *
 * Per component (m states):
 *  - m = 1: v = max_a c_a / (1 - gamma p_a), with p_a the action's self-loop probability and c_a its
 *    reward plus the discounted value of its other outcomes: the fixed point of a maximum of affine
 *    maps with slopes below 1 is the largest of their fixed points. One backup, exact. (With
 *    gamma = 1 a pure self-loop is worth 0 if its reward is 0, +Infinity if positive, and is never
 *    chosen if negative: the value of repeating it forever.)
 *  - otherwise Gauss-Seidel backups (max over actions) in the order of order.ts, alternating forward
 *    and backward sweeps ("Gauss-Seidel value iteration", Bertsekas & Tsitsiklis 1989, section 3.2;
 *    Puterman 1994, section 6.3.3; from memory).
 *    gamma < 1: values start at the lower bound min(0, min r) / (1 - gamma), so the iterates rise
 *    monotonically and a wave of exact values spreads from the exits in few sweeps (Puterman 1994,
 *    Theorem 6.3.2's monotone convergence from a lower bound; from memory). Each sweep is a
 *    gamma-contraction in the max norm with fixed point v*, hence after a sweep with change delta,
 *    |x - v*| <= gamma / (1 - gamma) * delta (Bertsekas & Tsitsiklis 1989, Proposition 3.1.2 and
 *    section 3.2.3 on Gauss-Seidel; Puterman 1994, Theorem 6.3.1 / Proposition 6.6.5; from memory):
 *    sweeps stop when that bound meets the component's target (types.ts `componentTarget`).
 *    gamma = 1 (episodic): values start at 0 as the textbook's do. The bound is
 *    |x - v*| <= tauMax * |T x - x|, where tauMax bounds the expected steps before leaving the
 *    component under every policy (stochastic shortest paths with all policies proper; Bertsekas &
 *    Tsitsiklis 1996, section 2.2; from memory; derivation: for the greedy policy mu of x and an
 *    optimal mu*, (I - P_mu)(x - v*) <= x - T x and (I - P_mu*)(v* - x) <= T x - x). tauMax is
 *    computed by the same sweeps on tau = 1 + max_a P_a tau and certified as a super-solution. When
 *    some policy can stay in the component forever, tauMax is infinite: the sweeps then stop on the
 *    textbook rule (change below the target) and `errorBound` is Infinity.
 *
 * The greedy policy is dp.ts's: `greedyActions(actionValues(...))`, lowest action index on ties.
 */
import type { FiniteModel } from "../../model/types.js";
import { liveRows } from "../evaluation.js";
import { actionValues, expectedReward, greedyActions } from "../sweeps.js";
import { solveOrder, type SolveOrder } from "./order.js";
import { discountedSweeps, fillOver, maxOver, undiscountedSweeps, type ComponentSweeps } from "./sweeps.js";
import { componentError, componentTarget, emptyStats, resolveOptions, type EngineOptions, type EngineResult } from "./types.js";

/**
 * The reward-independent part of the engine for one model: the components of the all-actions graph
 * over the live states and the order inside them. Build once, reuse for every reward (designer
 * reward, intent) of the model.
 */
export interface ValuePlan {
  readonly order: SolveOrder;
  /** `order.members` mapped to state indices. */
  readonly states: Int32Array;
}

export function planValueIteration(model: FiniteModel): ValuePlan {
  const nA = model.nActions;
  const { saStart, next, prob } = model;
  const { rowOf, states: live } = liveRows(model);
  const n = live.length;
  let cap = 0;
  for (let i = 0; i < n; i++) cap += saStart[(live[i] + 1) * nA] - saStart[live[i] * nA];
  const rowStart = new Int32Array(n + 1);
  let col = new Int32Array(cap);
  const exits = new Uint8Array(n);
  let e = 0;
  for (let i = 0; i < n; i++) {
    const s = live[i];
    rowStart[i] = e;
    const hi = saStart[(s + 1) * nA];
    for (let o = saStart[s * nA]; o < hi; o++) {
      if (prob[o] === 0) continue;
      const j = rowOf[next[o]];
      if (j < 0) exits[i] = 1;
      else if (j !== i) col[e++] = j;
    }
  }
  rowStart[n] = e;
  if (e < cap) col = col.slice(0, e);
  const order = solveOrder({ n, rowStart, col }, exits);
  const states = new Int32Array(n);
  for (let q = 0; q < n; q++) states[q] = live[order.members[q]];
  return { order, states };
}

export interface EngineSolution extends EngineResult {
  /** Greedy action per state (lowest index on ties, as dp.ts); -1 on terminal states. */
  policy: Int32Array;
  /** Action values, nStates * nActions. */
  q: Float64Array;
}

/** Optimal values, greedy policy and action values (see the file comment). */
export function valueIterationEngine(model: FiniteModel, reward: Float64Array, opts: EngineOptions = {}, plan: ValuePlan = planValueIteration(model)): EngineSolution {
  const res = solveValuesEngine(model, reward, opts, plan);
  const q = actionValues(model, reward, res.values, opts.gamma ?? model.gamma);
  return { ...res, policy: greedyActions(model, q), q };
}

/** Optimal values only (what the benchmark times); `plan` may be built beforehand and reused, `expected` is `expectedReward(model, reward)`. */
export function solveValuesEngine(
  model: FiniteModel,
  reward: Float64Array,
  opts: EngineOptions = {},
  plan: ValuePlan = planValueIteration(model),
  expected: Float64Array = expectedReward(model, reward),
): EngineResult {
  const o = resolveOptions(model.gamma, opts);
  const r = expected;
  const { order, states } = plan;
  const { compStart, count } = order;
  const gamma = o.gamma;
  const V = new Float64Array(model.nStates);
  const stats = emptyStats(count, order.largest);
  // Component of each state (-1 terminal), to gather the errors of exits: built once some error is not 0.
  let compOfState: Int32Array | null = null;
  const err = new Float64Array(count);
  let iterative = 0;
  for (let c = 0; c < count; c++) if (compStart[c + 1] - compStart[c] > 1) iterative++;
  let rmin = 0;
  for (let i = 0; i < r.length; i++) if (r[i] < rmin) rmin = r[i];
  const lower = gamma < 1 ? rmin / (1 - gamma) : 0;
  // gamma = 1 only, on first use: expected exit times (0 outside the current component), ones per (s, a).
  let tau: Float64Array | null = null;
  let ones: Float64Array | null = null;
  let converged = true;
  let bound = 0;
  const nA = model.nActions;
  const { saStart, next } = model;
  for (let c = 0; c < count; c++) {
    const lo = compStart[c];
    const hi = compStart[c + 1];
    // Largest error among the components this one can leave to (skipped while every error is 0).
    let errIn = 0;
    if (bound > 0 && compOfState === null) compOfState = componentOfState(model.nStates, states, compStart, count);
    for (let q = lo; compOfState !== null && q < hi; q++) {
      const k0 = states[q] * nA;
      for (let o2 = saStart[k0]; o2 < saStart[k0 + nA]; o2++) {
        const cj = compOfState[next[o2]];
        if (cj >= 0 && cj !== c && err[cj] > errIn) errIn = err[cj];
      }
    }
    let localErr = 0;
    if (hi - lo === 1) {
      stats.singletons++;
      stats.backups++;
      const v = singletonValue(model, r, gamma, V, states[lo]);
      V[states[lo]] = v;
      if (!Number.isFinite(v)) converged = false;
    } else {
      fillOver(V, states, lo, hi, lower);
      const target = componentTarget(o, errIn, iterative);
      const ops = greedySweeps(model, gamma, states, lo, hi);
      const res =
        gamma < 1
          ? discountedSweeps(ops, r, V, gamma, target, o.maxSweeps)
          : undiscountedSweeps(
              ops,
              r,
              V,
              (ones ??= new Float64Array(r.length).fill(1)),
              (tau ??= new Float64Array(model.nStates)),
              order.closed[c] === 0,
              target,
              o.maxSweeps,
            );
      stats.backups += res.backups;
      localErr = res.bound;
      if (!res.converged) converged = false;
    }
    err[c] = componentError(o, localErr, errIn);
    if (err[c] > bound) bound = err[c];
  }
  return { values: V, converged, errorBound: bound, stats };
}

function componentOfState(nStates: number, states: Int32Array, compStart: Int32Array, count: number): Int32Array {
  const out = new Int32Array(nStates).fill(-1);
  for (let c = 0; c < count; c++) for (let q = compStart[c]; q < compStart[c + 1]; q++) out[states[q]] = c;
  return out;
}

/** Closed-form value of a one-state component (see the file comment). */
function singletonValue(model: FiniteModel, r: Float64Array, gamma: number, V: Float64Array, s: number): number {
  const nA = model.nActions;
  const { saStart, next, prob } = model;
  let best = -Infinity;
  for (let k = s * nA; k < (s + 1) * nA; k++) {
    let stay = 0;
    let acc = 0;
    for (let o = saStart[k]; o < saStart[k + 1]; o++) {
      if (next[o] === s) stay += prob[o];
      else acc += prob[o] * V[next[o]];
    }
    const slope = 1 - gamma * stay;
    const v = slope > 0 ? (r[k] + gamma * acc) / slope : r[k] === 0 ? 0 : r[k] > 0 ? Infinity : -Infinity;
    if (v > best) best = v;
  }
  return best;
}

/**
 * One greedy Gauss-Seidel sweep over states[lo..hi) (backward: from hi - 1 down), reading and writing
 * `V`; returns the largest change. Single-outcome pairs skip the inner loop (deterministic models).
 */
function greedySweep(model: FiniteModel, r: Float64Array, gamma: number, V: Float64Array, states: Int32Array, lo: number, hi: number, backward: boolean): number {
  const nA = model.nActions;
  const { saStart, next, prob } = model;
  let delta = 0;
  const step = backward ? -1 : 1;
  const end = backward ? lo - 1 : hi;
  for (let q = backward ? hi - 1 : lo; q !== end; q += step) {
    const s = states[q];
    const k0 = s * nA;
    let best = -Infinity;
    for (let k = k0; k < k0 + nA; k++) {
      const olo = saStart[k];
      const ohi = saStart[k + 1];
      let v: number;
      if (ohi - olo === 1) v = r[k] + gamma * V[next[olo]];
      else {
        let ev = 0;
        for (let o = olo; o < ohi; o++) ev += prob[o] * V[next[o]];
        v = r[k] + gamma * ev;
      }
      if (v > best) best = v;
    }
    const d = Math.abs(best - V[s]);
    if (d > delta) delta = d;
    V[s] = best;
  }
  return delta;
}

/** Largest |T V - V| and largest signed (T V - V) over states[lo..hi), without writing. */
function greedyResidual(model: FiniteModel, r: Float64Array, gamma: number, V: Float64Array, states: Int32Array, lo: number, hi: number): { max: number; abs: number } {
  const nA = model.nActions;
  const { saStart, next, prob } = model;
  let max = -Infinity;
  let abs = 0;
  for (let q = lo; q < hi; q++) {
    const s = states[q];
    let best = -Infinity;
    for (let k = s * nA; k < (s + 1) * nA; k++) {
      let ev = 0;
      for (let o = saStart[k]; o < saStart[k + 1]; o++) ev += prob[o] * V[next[o]];
      const v = r[k] + gamma * ev;
      if (v > best) best = v;
    }
    const d = best - V[s];
    if (d > max) max = d;
    if (Math.abs(d) > abs) abs = Math.abs(d);
  }
  return { max, abs };
}

/** Value iteration's loops over one component, for the shared drivers of sweeps.ts. */
function greedySweeps(model: FiniteModel, gamma: number, states: Int32Array, lo: number, hi: number): ComponentSweeps {
  return {
    m: hi - lo,
    sweep: (r, V, backward) => greedySweep(model, r, gamma, V, states, lo, hi, backward),
    residual: (r, V) => greedyResidual(model, r, gamma, V, states, lo, hi),
    maxOf: (x) => maxOver(x, states, lo, hi),
    fill: (x, v) => fillOver(x, states, lo, hi, v),
  };
}
