/**
 * The sweep drivers policy evaluation (evaluate.ts) and value iteration (value-iteration.ts) share.
 * Each passes its own monomorphic sweep and residual loops as a `ComponentSweeps`; the drivers call
 * them once per sweep, never per backup.
 */
import { certifiedTauMax } from "./types.js";

/** The loops of one component (m states), its discount bound in. */
export interface ComponentSweeps {
  /** States in the component (the count of backups per sweep). */
  readonly m: number;
  /** One Gauss-Seidel sweep of `x` with reward vector `r` (backward: reverse order); returns the largest change. */
  sweep(r: Float64Array, x: Float64Array, backward: boolean): number;
  /** Over the component: the largest signed (T x - x) and the largest |T x - x|. */
  residual(r: Float64Array, x: Float64Array): { max: number; abs: number };
  /** Largest entry of `x` over the component. */
  maxOf(x: Float64Array): number;
  /** Set `x` to `v` over the component. */
  fill(x: Float64Array, v: number): void;
}

export interface ComponentResult {
  /** Proven bound on the component's own error (exits taken as exact); Infinity if none. */
  bound: number;
  converged: boolean;
  backups: number;
}

/** Sweeps alternating forward and backward until the change is <= tol or `cap` sweeps. */
export function sweepUntil(ops: ComponentSweeps, r: Float64Array, x: Float64Array, tol: number, cap: number): { sweeps: number; delta: number } {
  let sweeps = 0;
  let delta = Infinity;
  while (sweeps < cap && !(delta <= tol)) delta = ops.sweep(r, x, (sweeps++ & 1) === 1);
  return { sweeps, delta };
}

/**
 * gamma < 1: each sweep is a gamma-contraction in the max norm with the component's fixed point, so
 * after a sweep that changed x by delta, |x - x*| <= gamma / (1 - gamma) * delta (Bertsekas &
 * Tsitsiklis 1989, section 3.1 and Proposition 3.2.x on Gauss-Seidel; from memory; the same argument
 * holds whichever of the two orders the last sweep used).
 */
export function discountedSweeps(ops: ComponentSweeps, r: Float64Array, x: Float64Array, gamma: number, target: number, maxSweeps: number): ComponentResult {
  const factor = gamma / (1 - gamma);
  const sw = sweepUntil(ops, r, x, target / factor, maxSweeps);
  return { bound: factor * sw.delta, converged: factor * sw.delta <= target, backups: sw.sweeps * ops.m };
}

/**
 * gamma = 1 with the exit-time certificate: tau (expected steps before leaving; for value iteration
 * the largest over policies) is computed by the same sweeps with reward 1 and exits at 0, certified
 * as a super-solution (types.ts `certifiedTauMax`), and then x is swept until
 * tauMax * |T x - x| <= target. `tau` must be 0 outside the component; it is left so. Without a
 * certificate (a policy can stay forever; `exits` false: nothing leaves at all) the sweeps stop on
 * the textbook rule, change <= target, and the bound is Infinity.
 */
export function undiscountedSweeps(
  ops: ComponentSweeps,
  r: Float64Array,
  x: Float64Array,
  ones: Float64Array,
  tau: Float64Array,
  exits: boolean,
  target: number,
  maxSweeps: number,
): ComponentResult {
  const m = ops.m;
  let backups = 0;
  let tauCap = Infinity;
  if (exits) {
    // A policy that can stay forever makes tau grow without bound: the certificate gets a budget.
    const budget = Math.min(maxSweeps, 20 * m + 1000);
    let tol = 1e-9;
    for (let round = 0; round < 8; round++) {
      const sw = sweepUntil(ops, ones, tau, tol, budget);
      backups += (sw.sweeps + 1) * m;
      tauCap = certifiedTauMax(ops.residual(ones, tau).max, ops.maxOf(tau));
      if (tauCap < Infinity || sw.delta > tol) break;
      tol /= 100;
    }
    ops.fill(tau, 0);
  }
  if (!(tauCap < Infinity)) {
    const sw = sweepUntil(ops, r, x, target, maxSweeps);
    return { bound: Infinity, converged: sw.delta <= target, backups: backups + sw.sweeps * m };
  }
  let tol = target / tauCap;
  let sweepsLeft = maxSweeps;
  for (;;) {
    const sw = sweepUntil(ops, r, x, tol, sweepsLeft);
    sweepsLeft -= sw.sweeps;
    backups += (sw.sweeps + 1) * m;
    const bound = tauCap * ops.residual(r, x).abs;
    if (bound <= target) return { bound, converged: true, backups };
    if (sweepsLeft <= 0) return { bound, converged: false, backups };
    tol /= 10;
  }
}

/** Largest of x[idx[q]] for q in lo..hi - 1. */
export function maxOver(x: Float64Array, idx: Int32Array, lo: number, hi: number): number {
  let m = -Infinity;
  for (let q = lo; q < hi; q++) if (x[idx[q]] > m) m = x[idx[q]];
  return m;
}

/** x[idx[q]] = v for q in lo..hi - 1. */
export function fillOver(x: Float64Array, idx: Int32Array, lo: number, hi: number, v: number): void {
  for (let q = lo; q < hi; q++) x[idx[q]] = v;
}
