/**
 * Slider tuning across layouts, done honestly: search feature weights that make the designer-optimal
 * policy intent-optimal on every *tuning* layout, then measure what those weights do on *held-out*
 * layouts the search never saw.
 *
 * Method (derivative-free, exact, seeded):
 *  1. Coordinate search. For each movable feature in the order given, with the other weights fixed,
 *     every tuning layout yields the interval of this weight over which its designer-optimal policy is
 *     intent-optimal: the audit's weight-sensitivity search (`weightIntervals`, src/audit) gives the
 *     interval containing the current weight, or, when the current weight fails, the nearest weight that
 *     works (`fixAt`) and then the interval containing that. The intervals are intersected across
 *     tuning layouts and with the feature's bounds. When the current weight lies outside a non-empty
 *     intersection it moves inside: past the nearest edge by half the distance it had to travel (off the
 *     knife edge, where a slightly different layout would tip), at most to the middle of a bounded
 *     intersection. A round is one pass over the features.
 *  2. Acceptance is exact: every tuning layout is solved (`solveVariant`) and the weights are accepted
 *     when the largest regretNorm is <= TOLERANCE.
 *  3. Random restarts: when a round moves nothing and some tuning layout still fails, the search
 *     restarts from weights drawn uniformly within the bounds from `createRng(seed).fork("restart/<i>")`.
 *     Rounds across restarts are capped by `budget`. When nothing is accepted the weights with the
 *     smallest largest-regretNorm are returned (ties: the earlier).
 * Intervals are as exact as the sensitivity search (steps and bisection, src/audit/checks/sensitivity.ts).
 *
 * Diagnosis per movable feature, at the tuned weights: the intersection of the tuning layouts'
 * intervals (`interval`, +-Infinity where unbounded) and `constrained`: the tuning layouts demand a
 * non-zero weight (0 lies outside the interval), i.e. dropping the feature would break some tuning
 * layout. A feature that is not constrained was never tested by the tuning situations. When held-out
 * layouts game, each unconstrained feature whose weight alone (within its bounds) would make a gaming
 * held-out layout intent-optimal is named as a likely cause, and those layouts are suggested for tuning.
 *
 * Gaming: regretNorm >= GAMING_AT (0.3, the audit's critical threshold; our convention). The gaming
 * share's interval is Wilson's score interval (src/stats/wilson.ts). Pure; no I/O.
 */
import { prepareAudit } from "../audit/context.js";
import { weightIntervals } from "../audit/checks/sensitivity.js";
import type { FiniteModel, RewardVariant } from "../model/types.js";
import { createRng } from "../rng/rng.js";
import { solveVariant } from "../solve/compare.js";
import { wilsonInterval } from "../stats/wilson.js";
import type { Interval } from "../stats/interval.js";
import { emptyDict, ownValue } from "../util/own.js";

/** regretNorm at or below which a layout counts as intent-optimal. */
export const TOLERANCE = 1e-6;
/** regretNorm at or above which a layout counts as gamed (the audit's critical threshold; our convention). */
export const GAMING_AT = 0.3;

export interface FeatureBounds {
  feature: string;
  lo: number;
  hi: number;
}

export interface LayoutModel {
  layout: number;
  model: FiniteModel;
}

export interface TuneOptions {
  /** Most coordinate rounds, across restarts. */
  budget: number;
  seed: number;
  gamingAt?: number;
}

export interface SearchResult {
  weights: Record<string, number>;
  /** regretNorm per tuning layout at the returned weights. */
  tuningRegret: number[];
  maxRegretNorm: number;
  accepted: boolean;
  rounds: number;
  restarts: number;
}

export interface FeatureDiagnosis {
  name: string;
  weight: number;
  /** [lo, hi] keeping every tuning layout intent-optimal (others at the tuned weights); null when the tuned weights fail some tuning layout. */
  interval: [number, number] | null;
  unbounded: boolean;
  constrained: boolean;
  /** Held-out gaming layouts this feature's weight alone (within bounds) would fix. */
  mattered: number[];
}

export function variantOf(name: string, weights: Record<string, number>): RewardVariant {
  return { name, weights: Object.assign(emptyDict<number>(), weights) };
}

/** regretNorm of `weights` on one layout (exact solve). */
export function layoutRegret(model: FiniteModel, weights: Record<string, number>): number {
  return Math.max(0, solveVariant(model, variantOf("tuned", weights)).regretNorm);
}

/**
 * The interval of `feature`'s weight (others fixed) over which `model`'s designer-optimal policy is
 * intent-optimal: the one containing the current weight, else the one at the nearest weight that
 * works; null when no weight within the sensitivity search's range works.
 */
export function okInterval(model: FiniteModel, weights: Record<string, number>, feature: string): [number, number] | null {
  const at = (w: Record<string, number>) => weightIntervals(prepareAudit(model, variantOf("probe", w), { sensitivity: false }), [feature])[0];
  const row = at(weights);
  if (!row) return null;
  if (row.okAtCurrent) return [row.lo as number, row.hi as number];
  if (row.fixAt === null) return null;
  // The exact (parametric) search reports the edge itself, where the two policies tie and the greedy
  // choice may still be the old one: look just past it, on the side away from the current weight.
  const w0 = ownValue(weights, feature) ?? 0;
  const past = row.fixAt + Math.sign(row.fixAt - w0) * 1e-7 * Math.max(1, Math.abs(row.fixAt));
  for (const probe of [row.fixAt, past]) {
    const again = at({ ...weights, [feature]: probe });
    if (again && again.okAtCurrent) return [again.lo as number, again.hi as number];
  }
  return null;
}

function intersect(ivs: ([number, number] | null)[], bounds: [number, number]): [number, number] | null {
  let lo = bounds[0];
  let hi = bounds[1];
  for (const iv of ivs) {
    if (!iv) return null;
    lo = Math.max(lo, iv[0]);
    hi = Math.min(hi, iv[1]);
  }
  return lo <= hi ? [lo, hi] : null;
}

/** Where a weight outside [lo, hi] moves: past the nearest edge by half the way travelled, at most to the middle. */
export function moveInto(w: number, [lo, hi]: [number, number]): number {
  if (w >= lo && w <= hi) return w;
  const mid = Number.isFinite(lo) && Number.isFinite(hi) ? (lo + hi) / 2 : null;
  if (w < lo) {
    const t = lo + 0.5 * (lo - w);
    return mid === null ? t : Math.min(t, mid);
  }
  const t = hi - 0.5 * (w - hi);
  return mid === null ? t : Math.max(t, mid);
}

function clampWeights(start: Record<string, number>, bounds: FeatureBounds[]): Record<string, number> {
  const w = { ...start };
  for (const b of bounds) w[b.feature] = Math.min(b.hi, Math.max(b.lo, ownValue(w, b.feature) ?? 0));
  return w;
}

/** Coordinate search with seeded restarts; see the file comment. */
export function searchWeights(tuning: LayoutModel[], start: Record<string, number>, bounds: FeatureBounds[], opts: TuneOptions): SearchResult {
  const rng = createRng(opts.seed);
  const regrets = (w: Record<string, number>) => tuning.map((t) => layoutRegret(t.model, w));
  let w = clampWeights(start, bounds);
  let r = regrets(w);
  let best = { weights: w, tuningRegret: r, maxRegretNorm: Math.max(0, ...r) };
  let rounds = 0;
  let restarts = 0;
  while (best.maxRegretNorm > TOLERANCE && rounds < opts.budget) {
    rounds++;
    let moved = false;
    for (const b of bounds) {
      if (Math.max(0, ...r) <= TOLERANCE) break;
      const iv = intersect(tuning.map((t) => okInterval(t.model, w, b.feature)), [b.lo, b.hi]);
      if (!iv) continue;
      const next = moveInto(w[b.feature], iv);
      if (next === w[b.feature]) continue;
      w = { ...w, [b.feature]: next };
      r = regrets(w);
      moved = true;
      if (Math.max(0, ...r) < best.maxRegretNorm) best = { weights: w, tuningRegret: r, maxRegretNorm: Math.max(0, ...r) };
    }
    if (!moved && best.maxRegretNorm > TOLERANCE) {
      const draw = rng.fork(`restart/${restarts++}`);
      w = { ...w };
      for (const b of bounds) w[b.feature] = b.lo + draw.float() * (b.hi - b.lo);
      r = regrets(w);
      if (Math.max(0, ...r) < best.maxRegretNorm) best = { weights: w, tuningRegret: r, maxRegretNorm: Math.max(0, ...r) };
    }
  }
  return { ...best, accepted: best.maxRegretNorm <= TOLERANCE, rounds, restarts };
}

export interface HoldoutRow {
  layout: number;
  regretNorm: number;
  gaming: boolean;
}

export interface HoldoutSummary {
  rows: HoldoutRow[];
  gaming: number;
  gamingRate: number;
  ci: Interval;
  worst: HoldoutRow | null;
}

/** Gaming count, share, Wilson interval and the worst layout of per-layout regretNorms. */
export function summarizeHoldout(rows: HoldoutRow[]): HoldoutSummary {
  const gaming = rows.filter((x) => x.gaming).length;
  const n = rows.length;
  const worst = rows.reduce<HoldoutRow | null>((a, x) => (a === null || x.regretNorm > a.regretNorm ? x : a), null);
  const ci = n > 0 ? wilsonInterval(gaming, n) : { point: 0, lower: 0, upper: 1 };
  return { rows, gaming, gamingRate: n > 0 ? gaming / n : 0, ci, worst };
}

/** Held-out rows of a list of per-layout regretNorms. */
export function holdoutRows(layouts: number[], regretNorms: number[], gamingAt = GAMING_AT): HoldoutRow[] {
  return layouts.map((layout, i) => ({ layout, regretNorm: regretNorms[i], gaming: regretNorms[i] >= gamingAt }));
}

/** Per-feature intervals over the tuning layouts and the held-out layouts each unconstrained feature would fix. */
export function diagnose(
  tuning: LayoutModel[],
  weights: Record<string, number>,
  bounds: FeatureBounds[],
  gamingHoldout: LayoutModel[],
): FeatureDiagnosis[] {
  return bounds.map((b) => {
    const iv = intersect(tuning.map((t) => okInterval(t.model, weights, b.feature)), [-Infinity, Infinity]);
    const interval = iv && weights[b.feature] >= iv[0] && weights[b.feature] <= iv[1] ? iv : null;
    const constrained = interval !== null && !(interval[0] <= 0 && interval[1] >= 0);
    const mattered: number[] = [];
    if (!constrained) {
      for (const h of gamingHoldout) {
        const fix = okInterval(h.model, weights, b.feature);
        if (fix && fix[0] <= b.hi && fix[1] >= b.lo && !(weights[b.feature] >= fix[0] && weights[b.feature] <= fix[1])) mattered.push(h.layout);
      }
    }
    return { name: b.feature, weight: weights[b.feature], interval, unbounded: interval !== null && (!Number.isFinite(interval[0]) || !Number.isFinite(interval[1])), constrained, mattered };
  });
}
