/**
 * Student t distribution: two-sided tail probability and quantile, through the regularized incomplete
 * beta function I_x(a, b) (continued fraction, modified Lentz; Press et al., Numerical Recipes,
 * section 6.4) and log-gamma (gamma.ts).
 *   P(|T| > t) = I_{df/(df + t^2)}(df/2, 1/2)
 */

import { logGamma } from "./gamma.js";

function betaContinuedFraction(x: number, a: number, b: number): number {
  const tiny = 1e-300;
  const qab = a + b;
  const qap = a + 1;
  const qam = a - 1;
  let c = 1;
  let d = 1 - (qab * x) / qap;
  if (Math.abs(d) < tiny) d = tiny;
  d = 1 / d;
  let h = d;
  for (let m = 1; m <= 10000; m++) {
    const m2 = 2 * m;
    let aa = (m * (b - m) * x) / ((qam + m2) * (a + m2));
    d = 1 + aa * d;
    if (Math.abs(d) < tiny) d = tiny;
    c = 1 + aa / c;
    if (Math.abs(c) < tiny) c = tiny;
    d = 1 / d;
    h *= d * c;
    aa = (-(a + m) * (qab + m) * x) / ((a + m2) * (qap + m2));
    d = 1 + aa * d;
    if (Math.abs(d) < tiny) d = tiny;
    c = 1 + aa / c;
    if (Math.abs(c) < tiny) c = tiny;
    d = 1 / d;
    const del = d * c;
    h *= del;
    if (Math.abs(del - 1) < 1e-16) break;
  }
  return h;
}

/** Regularized incomplete beta function I_x(a, b), a, b > 0, x in [0, 1]. */
export function regularizedIncompleteBeta(x: number, a: number, b: number): number {
  return incompleteBeta(x, 1 - x, a, b);
}

/** I_x(a, b) given both x and y = 1 - x (so callers can pass an accurate 1 - x). */
function incompleteBeta(x: number, y: number, a: number, b: number): number {
  if (!(x >= 0 && x <= 1) || !(a > 0) || !(b > 0)) return NaN;
  if (x === 0) return 0;
  if (y === 0) return 1;
  const lbt = logGamma(a + b) - logGamma(a) - logGamma(b) + a * Math.log(x) + b * Math.log(y);
  if (x < (a + 1) / (a + b + 2)) return (Math.exp(lbt) * betaContinuedFraction(x, a, b)) / a;
  return 1 - (Math.exp(lbt) * betaContinuedFraction(y, b, a)) / b;
}

/** Two-sided p-value P(|T| > |t|) for Student's t with `df` degrees of freedom (df > 0, may be fractional). */
export function studentTwoSidedP(t: number, df: number): number {
  if (!(df > 0) || Number.isNaN(t)) return NaN;
  if (!Number.isFinite(t)) return 0;
  const t2 = t * t;
  // Pass 1 - x = t^2/(df + t^2) directly: for small |t|, x = df/(df + t^2) rounds to 1.
  return incompleteBeta(df / (df + t2), t2 / (df + t2), df / 2, 0.5);
}

/** Student t CDF. */
export function studentCdf(t: number, df: number): number {
  const tail = studentTwoSidedP(t, df) / 2;
  return t >= 0 ? 1 - tail : tail;
}

/** Student t quantile for p in (0, 1), by bisection on the CDF (about 1e-12 absolute). */
export function studentQuantile(p: number, df: number): number {
  if (!(p > 0 && p < 1) || !(df > 0)) return NaN;
  if (p === 0.5) return 0;
  let lo = -1;
  let hi = 1;
  while (studentCdf(lo, df) > p) lo *= 2;
  while (studentCdf(hi, df) < p) hi *= 2;
  for (let i = 0; i < 200 && hi - lo > 1e-13 * Math.max(1, Math.abs(lo)); i++) {
    const mid = (lo + hi) / 2;
    if (studentCdf(mid, df) < p) lo = mid;
    else hi = mid;
  }
  return (lo + hi) / 2;
}
