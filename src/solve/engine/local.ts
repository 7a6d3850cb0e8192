/**
 * A policy's values at the start states only, solving no more of the model than they depend on to
 * the accuracy asked (gamma < 1).
 *
 * Why it pays: reference values such as the uniform-random policy's start value are numbers about the
 * start, but a random walk makes the whole model one cyclic component, so the component-wise
 * evaluation (evaluate.ts) must iterate over every state. With discounting, far states matter little:
 * what happens after the walk has gone D transitions away from the start is discounted by at least
 * gamma^D and usually by much more (a walk drifts slowly).
 *
 * Method. A breadth-first search from the live start states over the policy's positive-probability
 * transitions gives reachable live states a depth, grown only as far as needed. The region R_d
 * (depth <= d) is solved with every state outside it held at value 0 (giving v0) and, once more, with
 * reward 0 and every live state outside held at 1 (giving g, the expected discount gamma^T at the
 * first step T the walk leaves R_d for a live state, 0 if it never does). With
 * lo = min(0, min_o r(o)) / (1 - gamma) and hi = max(0, max_o r(o)) / (1 - gamma) over every outcome,
 * every value of every policy lies in [lo, hi] (a return is a discounted sum of rewards in
 * [min r, max r] that may stop early), and by the strong Markov property v = v0 + E[gamma^T v(X_T)],
 * so
 *     |v(s) - (v0(s) + g(s) (lo + hi) / 2)| <= g(s) (hi - lo) / 2.
 * d doubles (from 16) until that truncation term is at most half the accuracy at every start state;
 * v0 and g are solved by the engine's component loop (evaluate.ts `solveChain`) to a quarter of the
 * accuracy (g scaled by the value range), so the whole bound stays within the accuracy asked. When the
 * region would hold more than half the model's live states it takes every reachable one (then g = 0
 * and nothing is truncated).
 *
 * Pure; no I/O.
 */
import type { FiniteModel } from "../../model/types.js";
import type { Policy } from "../sweeps.js";
import { solveChain, type Order } from "./evaluate.js";
import { regionChain, regionOrder, regionReward, type RegionChain } from "./region.js";
import { resolveOptions, type EngineOptions } from "./types.js";

/** The first depth tried; doubled while the truncation bound is too wide. */
const FIRST_DEPTH = 16;

export interface StartValues {
  /** Per reward: state-indexed values, set at the start states (start > 0), NaN at every other state. */
  values: Float64Array[];
  /** Proven bound on |value - v(s)| at every start state (rounding aside). */
  errorBound: number;
  /** Live states the last region held. */
  solvedStates: number;
  /** Live states reachable from the start, or -1 when the search stopped before finding them all. */
  reachable: number;
}

/**
 * Breadth-first search from the live start states over the policy's positive-probability transitions,
 * grown on demand: after `growTo(d)`, `order[0 .. size)` holds exactly the reachable live states of
 * depth <= d, in breadth-first order (the start states first).
 */
class Frontier {
  readonly order: Int32Array;
  readonly depth: Int32Array;
  readonly starts: number;
  size = 0;
  private head = 0;
  constructor(
    private readonly model: FiniteModel,
    private readonly policy: Policy,
  ) {
    const { nStates: nS, terminal } = model;
    this.depth = new Int32Array(nS).fill(-1);
    this.order = new Int32Array(nS);
    for (let s = 0; s < nS; s++) if (model.start[s] > 0 && !terminal[s]) ((this.depth[s] = 0), (this.order[this.size++] = s));
    this.starts = this.size;
  }
  growTo(d: number): void {
    const { nActions: nA, saStart, next, prob, terminal } = this.model;
    const { order, depth, policy } = this;
    let tail = this.size;
    let head = this.head;
    for (; head < tail && depth[order[head]] < d; head++) {
      const s = order[head];
      for (let a = 0; a < nA; a++) {
        if (policy[s * nA + a] === 0) continue;
        for (let q = saStart[s * nA + a]; q < saStart[s * nA + a + 1]; q++) {
          const t = next[q];
          if (prob[q] === 0 || terminal[t] || depth[t] >= 0) continue;
          depth[t] = depth[s] + 1;
          order[tail++] = t;
        }
      }
    }
    this.head = head;
    this.size = tail;
  }
  /** Every reachable state found. */
  get complete(): boolean {
    return this.head === this.size;
  }
}

/** [lo, hi] holding every value of every policy for a reward per outcome: min(0, min r) / (1 - gamma), max(0, max r) / (1 - gamma). */
function valueRange(reward: Float64Array, gamma: number): { lo: number; hi: number } {
  let min = 0;
  let max = 0;
  for (let o = 0; o < reward.length; o++) {
    const r = reward[o];
    if (r < min) min = r;
    else if (r > max) max = r;
    else if (r !== r) return { lo: NaN, hi: NaN };
  }
  return { lo: min / (1 - gamma), hi: max / (1 - gamma) };
}

/**
 * Values of `policy` at the start states for each reward (per outcome), to `opts.accuracy`; null when
 * no bound can be had this way (gamma >= 1, a reward that is not finite, or a solve that did not
 * converge): callers then evaluate the whole model.
 */
export function startValuesEngine(model: FiniteModel, rewards: Float64Array[], policy: Policy, opts: EngineOptions = {}): StartValues | null {
  const o = resolveOptions(model.gamma, opts);
  const { gamma, accuracy } = o;
  if (!(gamma < 1)) return null;
  const nS = model.nStates;
  const ranges = rewards.map((r) => valueRange(r, gamma));
  let halfWidth = 0;
  let scale = 0;
  for (const { lo, hi } of ranges) {
    if (!Number.isFinite(lo) || !Number.isFinite(hi)) return null;
    halfWidth = Math.max(halfWidth, (hi - lo) / 2);
    scale = Math.max(scale, -lo, hi);
  }
  let live = 0;
  for (let s = 0; s < nS; s++) if (!model.terminal[s]) live++;
  const front = new Frontier(model, policy);
  const { order, starts } = front;
  const choice = { policy };
  const scratch = new Int32Array(nS).fill(-1);
  let held: Float64Array | null = null;
  let g: Float64Array | null = null;
  let gErr = 0;
  let region: { chain: RegionChain; order: Order } | null = null;
  for (let d = FIRST_DEPTH; ; d *= 2) {
    front.growTo(d);
    if (front.size > live / 2) front.growTo(Infinity);
    if (front.complete) break;
    const rc = regionChain(model, choice, order.subarray(0, front.size), scratch);
    region = { chain: rc, order: regionOrder(rc) };
    if (!held) {
      held = new Float64Array(nS);
      for (let s = 0; s < nS; s++) if (!model.terminal[s]) held[s] = 1;
    }
    const gAccuracy = scale > 0 ? accuracy / (4 * scale) : accuracy;
    const res = solveChain(rc.chain, regionReward(model, choice, rc, null, held, gamma), region.order, { ...o, accuracy: gAccuracy });
    if (!res.converged || !(res.errorBound <= gAccuracy)) return null;
    let worst = 0;
    for (let i = 0; i < starts; i++) worst = Math.max(worst, res.values[i] + res.errorBound);
    if (worst * halfWidth <= accuracy / 2) {
      g = res.values;
      gErr = res.errorBound;
      break;
    }
  }
  let last: RegionChain;
  let lastOrder: Order;
  if (g && region) ({ chain: last, order: lastOrder } = region);
  else {
    last = regionChain(model, choice, order.subarray(0, front.size), scratch);
    lastOrder = regionOrder(last);
  }
  const values: Float64Array[] = [];
  let errorBound = 0;
  for (let j = 0; j < rewards.length; j++) {
    const { lo, hi } = ranges[j];
    const r = regionReward(model, choice, last, { perOutcome: rewards[j] }, null, gamma);
    const res = solveChain(last.chain, r, lastOrder, { ...o, accuracy: g ? accuracy / 4 : accuracy });
    if (!res.converged || !Number.isFinite(res.errorBound)) return null;
    const v = new Float64Array(nS).fill(NaN);
    for (let s = 0; s < nS; s++) if (model.start[s] > 0 && model.terminal[s]) v[s] = 0;
    for (let i = 0; i < starts; i++) {
      const gi = g ? g[i] : 0;
      v[order[i]] = res.values[i] + gi * ((lo + hi) / 2);
      const e = res.errorBound + (g ? gErr * Math.max(-lo, hi) + (gi + gErr) * ((hi - lo) / 2) : 0);
      errorBound = Math.max(errorBound, e);
    }
    values.push(v);
  }
  return { values, errorBound, solvedStates: front.size, reachable: front.complete ? front.size : -1 };
}
