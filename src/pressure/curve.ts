/**
 * Optimization-pressure curves: designer return and intent of KL-regularized soft-optimal policies of
 * increasing strength (src/solve/soft.ts), from the reference policy itself (beta = 0) to near-greedy.
 *
 * Strength is reported as the inverse temperature beta and as the KL divergence of the soft policy
 * from the reference, accumulated along the policy's own trajectories (discounted, from the start
 * distribution; `klFromReference(...).start`).
 *
 * Default betas: 0, then 24 values log-spaced from 0.1 / R to 1e4 / R, where R is the designer value
 * scale max_s |V*_d(s)| + max_o |r_d(o)| (at least 1e-9): at beta = 0.1 / R the policy is within a few
 * percent of the reference; at 1e4 / R an action that is worse by 1e-3 R has odds e^-10: near-greedy.
 *
 * peak: the first point of maximum intent, up to the solvers' accuracy (an intent within
 * FIXED_POINT_ACCURACY of the maximum counts as the maximum, so a plateau of near-greedy points equal
 * up to rounding peaks at its first point whatever the last digits say). onset: the strength of the
 * first point i at or after the peak from which intent falls by more than `tolerance` — some later
 * point j has intent_j < intent_i - tolerance and a higher designer return — or null when there is
 * none. Over-optimization is what happens past the best intent the curve reaches: a dip before a
 * later, higher peak (intent first falling as the policy leaves the reference, then climbing above
 * it) is not an onset.
 * Default tolerance: 1% of the model's intent range, 0.01 * (V_I* - V_I(uniform random)) (at least 1e-9).
 *
 * scale: the uniform-random and optimal start values of the designer reward and of the intent, so a
 * reader (and the sparklines of `gapwatch pressure`) can place the curve between the two.
 *
 * Pure; no I/O.
 */
import { designerReward } from "../model/reward.js";
import type { FiniteModel, RewardVariant } from "../model/types.js";
import { FIXED_POINT_ACCURACY } from "../solve/evaluation.js";
import { optimalSolution, policyValues, policyValuesMany } from "../solve/default-solver.js";
import { startValue, uniformPolicy } from "../solve/policy.js";
import type { Policy } from "../solve/sweeps.js";
import { softValueIteration } from "../solve/soft.js";
import { InputError } from "../errors.js";

export interface PressurePoint {
  strength: number;
  kl: number;
  designer: number;
  intent: number;
}

export interface ScoreRange {
  /** Start value under the uniform-random policy. */
  random: number;
  /** Start value of the optimal policy for this score. */
  optimum: number;
}

export interface PressureCurve {
  points: PressurePoint[];
  peak: { strength: number; intent: number };
  onset: number | null;
  scale: { designer: ScoreRange; intent: ScoreRange };
}

export interface PressureOptions {
  reference?: Policy;
  betas?: number[];
  gamma?: number;
  /** Intent drop that counts as a fall (default: 1% of the intent range, see the module comment). */
  tolerance?: number;
  /** Number of log-spaced betas after beta = 0 (default 24). */
  count?: number;
  /** Solver tolerance (default 1e-9). */
  tol?: number;
}

export function defaultBetas(model: FiniteModel, rd: Float64Array, gamma: number, count = 24): number[] {
  const v = optimalSolution(model, rd, { gamma, tol: 1e-8 }).values;
  let R = 0;
  for (let s = 0; s < v.length; s++) R = Math.max(R, Math.abs(v[s]));
  let rm = 0;
  for (let o = 0; o < rd.length; o++) rm = Math.max(rm, Math.abs(rd[o]));
  R = Math.max(R + rm, 1e-9);
  const lo = Math.log10(0.1 / R);
  const hi = Math.log10(1e4 / R);
  const out = [0];
  for (let i = 0; i < count; i++) out.push(10 ** (lo + ((hi - lo) * i) / Math.max(1, count - 1)));
  return out;
}

/** Index of the first point of maximum intent (0 for an empty curve). */
export function peakIndex(points: readonly PressurePoint[]): number {
  let top = -Infinity;
  for (const pt of points) if (pt.intent > top) top = pt.intent;
  let p = 0;
  while (p < points.length - 1 && !(points[p].intent >= top - FIXED_POINT_ACCURACY)) p++;
  return p;
}

/** The onset index per the module comment (never before the peak), or -1. */
export function onsetIndex(points: readonly PressurePoint[], tolerance: number): number {
  for (let i = peakIndex(points); i < points.length; i++) {
    for (let j = i + 1; j < points.length; j++) {
      if (points[j].intent < points[i].intent - tolerance && points[j].designer > points[i].designer) return i;
    }
  }
  return -1;
}

export function pressureCurve(model: FiniteModel, variant: RewardVariant, opts: PressureOptions = {}): PressureCurve {
  const gamma = opts.gamma ?? model.gamma;
  const tol = opts.tol ?? 1e-9;
  const rd = designerReward(model, variant, gamma);
  const reference = opts.reference ?? uniformPolicy(model);
  const betas = opts.betas ?? defaultBetas(model, rd, gamma, opts.count);
  for (const b of betas) if (!(b >= 0)) throw new InputError("input.beta", `strengths must be >= 0, got ${b}`, "pressure betas");
  const points: PressurePoint[] = [];
  for (const beta of betas) {
    const sol = softValueIteration(model, rd, { beta, reference, gamma, tol });
    const [designer, intent] = policyValuesMany(model, [rd, model.intent], sol.policy, { gamma, tol }).map((e) => startValue(model, e.values));
    points.push({ strength: beta, kl: sol.kl.start, designer, intent });
  }
  const range = (r: Float64Array): ScoreRange => ({
    random: startValue(model, policyValues(model, r, uniformPolicy(model), { gamma, tol }).values),
    optimum: startValue(model, optimalSolution(model, r, { gamma, tol }).values),
  });
  const scale = { designer: range(rd), intent: range(model.intent) };
  const tolerance = opts.tolerance ?? Math.max(1e-9, 0.01 * Math.abs(scale.intent.optimum - scale.intent.random));
  const p = peakIndex(points);
  const on = onsetIndex(points, tolerance);
  return { points, peak: { strength: points[p]?.strength ?? 0, intent: points[p]?.intent ?? NaN }, onset: on < 0 ? null : points[on].strength, scale };
}
