/**
 * Chi-square goodness of fit, with its distribution computed here (no statistics dependency at run time).
 *
 * The regularized lower incomplete gamma function P(a, x) uses the power series for x < a + 1 and the
 * continued fraction for Q = 1 - P otherwise (modified Lentz), the standard pair of expansions
 * (Abramowitz & Stegun 6.5.29 and 6.5.31); ln Gamma from src/stats/gamma.ts (Lanczos).
 * The chi-square CDF with k degrees of freedom is P(k/2, x/2); the quantile inverts it by bisection
 * on a bracket, refined by Newton steps. Tests compare against jstat and a published table.
 */

import { logGamma } from "../stats/gamma.js";

/** Regularized lower incomplete gamma P(a, x), a > 0, x >= 0. */
export function regularizedGammaP(a: number, x: number): number {
  if (!(a > 0) || !(x >= 0)) return NaN;
  if (x === 0) return 0;
  if (!Number.isFinite(x)) return 1;
  const lnPre = a * Math.log(x) - x - logGamma(a);
  if (x < a + 1) {
    // Series: P = x^a e^-x / Gamma(a+1) * sum_n x^n / ((a+1)...(a+n)).
    let term = 1 / a;
    let sum = term;
    for (let n = 1; n < 10_000; n++) {
      term *= x / (a + n);
      sum += term;
      if (Math.abs(term) < Math.abs(sum) * 1e-16) break;
    }
    return Math.min(1, sum * Math.exp(lnPre));
  }
  // Continued fraction for Q (modified Lentz).
  const tiny = 1e-300;
  let b = x + 1 - a;
  let c = 1 / tiny;
  let d = 1 / b;
  let h = d;
  for (let i = 1; i < 10_000; i++) {
    const an = -i * (i - a);
    b += 2;
    d = an * d + b;
    if (Math.abs(d) < tiny) d = tiny;
    c = b + an / c;
    if (Math.abs(c) < tiny) c = tiny;
    d = 1 / d;
    const del = d * c;
    h *= del;
    if (Math.abs(del - 1) < 1e-16) break;
  }
  return Math.max(0, 1 - Math.exp(lnPre) * h);
}

export function chiSquareCdf(x: number, df: number): number {
  if (x <= 0) return 0;
  return regularizedGammaP(df / 2, x / 2);
}

/** Upper tail probability P(X >= x) for X ~ chi-square(df). */
export function chiSquareSurvival(x: number, df: number): number {
  return 1 - chiSquareCdf(x, df);
}

/** The p-quantile of chi-square(df), 0 < p < 1. */
export function chiSquareQuantile(p: number, df: number): number {
  if (!(p > 0 && p < 1) || !(df > 0)) return NaN;
  let lo = 0;
  let hi = Math.max(1, df);
  while (chiSquareCdf(hi, df) < p) hi *= 2;
  for (let i = 0; i < 200 && hi - lo > 1e-12 * hi; i++) {
    const mid = 0.5 * (lo + hi);
    if (chiSquareCdf(mid, df) < p) lo = mid;
    else hi = mid;
  }
  let x = 0.5 * (lo + hi);
  // Newton refinement with the density f(x) = x^(k/2-1) e^(-x/2) / (2^(k/2) Gamma(k/2)).
  for (let i = 0; i < 3; i++) {
    const k2 = df / 2;
    const lnf = (k2 - 1) * Math.log(x) - x / 2 - k2 * Math.LN2 - logGamma(k2);
    const f = Math.exp(lnf);
    if (!(f > 0) || !Number.isFinite(f)) break;
    const nx = x - (chiSquareCdf(x, df) - p) / f;
    if (!(nx > lo && nx < hi)) break;
    x = nx;
  }
  return x;
}

export interface GoodnessOfFit {
  /** The statistic sum (O - E)^2 / E over the pooled categories. */
  statistic: number;
  df: number;
  /** The rejection threshold: the (1 - alpha) quantile. */
  critical: number;
  pValue: number;
  reject: boolean;
  /** Categories after pooling: labels, observed and expected counts. */
  cells: { label: string; observed: number; expected: number }[];
}

/**
 * Pearson's chi-square test of observed counts against probabilities. Categories with expected count
 * below `minExpected` (5, Cochran's rule: common practice) are pooled into one cell; df = cells - 1.
 * Returns null when fewer than two cells remain (nothing to test).
 */
export function chiSquareTest(labels: string[], observed: number[], probs: number[], alpha: number, minExpected = 5): GoodnessOfFit | null {
  const n = observed.reduce((a, b) => a + b, 0);
  const cells: { label: string; observed: number; expected: number }[] = [];
  let poolO = 0;
  let poolE = 0;
  const pooled: string[] = [];
  for (let i = 0; i < labels.length; i++) {
    const e = n * probs[i];
    if (e < minExpected) {
      poolO += observed[i];
      poolE += e;
      pooled.push(labels[i]);
    } else cells.push({ label: labels[i], observed: observed[i], expected: e });
  }
  if (pooled.length > 0) {
    if (poolE >= minExpected || cells.length === 0) cells.push({ label: `pooled(${pooled.length})`, observed: poolO, expected: poolE });
    else if (cells.length > 0) {
      // Too small even pooled: merge into the smallest remaining cell.
      let m = 0;
      for (let i = 1; i < cells.length; i++) if (cells[i].expected < cells[m].expected) m = i;
      cells[m] = { label: `${cells[m].label}+pooled(${pooled.length})`, observed: cells[m].observed + poolO, expected: cells[m].expected + poolE };
    }
  }
  if (cells.length < 2) return null;
  let statistic = 0;
  for (const c of cells) statistic += ((c.observed - c.expected) * (c.observed - c.expected)) / c.expected;
  const df = cells.length - 1;
  const critical = chiSquareQuantile(1 - alpha, df);
  return { statistic, df, critical, pValue: chiSquareSurvival(statistic, df), reject: statistic > critical, cells };
}
