/**
 * Rank correlations, as scipy computes them:
 * - Spearman rho: Pearson correlation of average ranks (ties share the mean of their positions);
 * - Kendall tau-b: (P - Q) / sqrt((P + Q + T)(P + Q + U)), P/Q concordant/discordant pairs, T pairs tied
 *   only in x, U pairs tied only in y (pairs tied in both count in neither);
 * - Kendall tau-c (Stuart): 2(P - Q) / (n^2 (m - 1) / m), m = min(#distinct x, #distinct y);
 * - asymptotic two-sided p-values: tau-b with scipy's tie-corrected normal variance; rho through
 *   t = rho * sqrt((n - 2) / (1 - rho^2)) with n - 2 degrees of freedom (scipy `spearmanr`).
 * A constant input gives NaN (the correlation is undefined), as scipy does.
 *
 * `RunningRankCorrelation` follows a growing paired series (for instance designer return vs intent
 * score across checkpoints): each `push` updates the Kendall pair counts in O(n); Spearman is
 * recomputed on request in O(n log n).
 */
import { InputError } from "../errors.js";
import { normalTwoSidedP } from "./normal.js";
import { studentTwoSidedP } from "./student.js";
import type { Sample } from "./summary.js";

function checkPaired(x: Sample, y: Sample, what: string): void {
  if (x.length !== y.length) {
    throw new InputError("stats.shape", `${what} needs paired samples of equal length, got ${x.length} and ${y.length}`, what);
  }
  if (x.length < 2) throw new InputError("stats.empty", `${what} needs at least 2 pairs, got ${x.length}`, what);
}

function clampCorr(r: number): number {
  return r > 1 ? 1 : r < -1 ? -1 : r;
}

/** 1-based ranks, ties get the average of the positions they span (scipy `rankdata(method="average")`). */
export function averageRanks(xs: Sample): Float64Array {
  const n = xs.length;
  const idx = new Int32Array(n);
  for (let i = 0; i < n; i++) idx[i] = i;
  idx.sort((a, b) => xs[a] - xs[b]);
  const ranks = new Float64Array(n);
  let i = 0;
  while (i < n) {
    let j = i + 1;
    while (j < n && xs[idx[j]] === xs[idx[i]]) j++;
    const r = (i + 1 + j) / 2; // mean of positions i+1 .. j
    for (let k = i; k < j; k++) ranks[idx[k]] = r;
    i = j;
  }
  return ranks;
}

/** Pearson product-moment correlation (two-pass). NaN if either sample is constant. */
export function pearson(x: Sample, y: Sample): number {
  checkPaired(x, y, "pearson");
  const n = x.length;
  let mx = 0;
  let my = 0;
  for (let i = 0; i < n; i++) {
    mx += x[i];
    my += y[i];
  }
  mx /= n;
  my /= n;
  let sxy = 0;
  let sxx = 0;
  let syy = 0;
  for (let i = 0; i < n; i++) {
    const dx = x[i] - mx;
    const dy = y[i] - my;
    sxy += dx * dy;
    sxx += dx * dx;
    syy += dy * dy;
  }
  if (sxx === 0 || syy === 0) return NaN;
  return clampCorr(sxy / Math.sqrt(sxx * syy));
}

/** Spearman's rho with average ranks for ties. */
export function spearman(x: Sample, y: Sample): number {
  checkPaired(x, y, "spearman");
  return pearson(averageRanks(x), averageRanks(y));
}

/** Spearman rho with its asymptotic two-sided p-value (t distribution, n - 2 df, as scipy). */
export function spearmanTest(x: Sample, y: Sample): { rho: number; t: number; df: number; p: number } {
  const rho = spearman(x, y);
  const df = x.length - 2;
  if (Number.isNaN(rho) || df < 1) return { rho, t: NaN, df, p: NaN };
  if (Math.abs(rho) === 1) return { rho, t: rho * Infinity, df, p: 0 };
  const t = rho * Math.sqrt(df / (1 - rho * rho));
  return { rho, t, df, p: studentTwoSidedP(t, df) };
}

/** Pair counts behind Kendall's tau. */
export interface KendallCounts {
  readonly n: number;
  /** Concordant pairs. */
  readonly concordant: number;
  /** Discordant pairs. */
  readonly discordant: number;
  /** Pairs tied in x only. */
  readonly tiesX: number;
  /** Pairs tied in y only. */
  readonly tiesY: number;
  /** Pairs tied in both. */
  readonly tiesBoth: number;
}

/** Count concordant / discordant / tied pairs, O(n^2) (fine for the checkpoint-sized series we rank). */
export function kendallCounts(x: Sample, y: Sample): KendallCounts {
  checkPaired(x, y, "kendall");
  let P = 0;
  let Q = 0;
  let T = 0;
  let U = 0;
  let B = 0;
  const n = x.length;
  for (let i = 1; i < n; i++) {
    const xi = x[i];
    const yi = y[i];
    for (let j = 0; j < i; j++) {
      const dx = xi - x[j];
      const dy = yi - y[j];
      if (dx === 0) {
        if (dy === 0) B++;
        else T++;
      } else if (dy === 0) U++;
      else if (dx > 0 === dy > 0) P++;
      else Q++;
    }
  }
  return { n, concordant: P, discordant: Q, tiesX: T, tiesY: U, tiesBoth: B };
}

export type KendallVariant = "b" | "c";

function distinctCount(xs: Sample): number {
  return new Set(Array.from(xs as ArrayLike<number>)).size;
}

function tauBFromCounts(c: KendallCounts): number {
  const a = c.concordant + c.discordant + c.tiesX;
  const b = c.concordant + c.discordant + c.tiesY;
  if (a === 0 || b === 0) return NaN;
  return clampCorr((c.concordant - c.discordant) / Math.sqrt(a * b));
}

function tauCFromCounts(c: KendallCounts, m: number): number {
  if (m < 2) return NaN;
  return clampCorr((2 * (c.concordant - c.discordant)) / ((c.n * c.n * (m - 1)) / m));
}

/** Kendall tau-b (default) or tau-c. */
export function kendall(x: Sample, y: Sample, variant: KendallVariant = "b"): number {
  const c = kendallCounts(x, y);
  if (variant === "c") return tauCFromCounts(c, Math.min(distinctCount(x), distinctCount(y)));
  return tauBFromCounts(c);
}

export function kendallTauB(x: Sample, y: Sample): number {
  return kendall(x, y, "b");
}

export function kendallTauC(x: Sample, y: Sample): number {
  return kendall(x, y, "c");
}

/** Tie-group sums used by the tau-b variance: sum t(t-1)/2, sum t(t-1)(t-2), sum t(t-1)(2t+5). */
function tieSums(xs: Sample): [number, number, number] {
  const counts = new Map<number, number>();
  for (let i = 0; i < xs.length; i++) counts.set(xs[i], (counts.get(xs[i]) ?? 0) + 1);
  let pairs = 0;
  let v0 = 0;
  let v1 = 0;
  for (const t of counts.values()) {
    if (t < 2) continue;
    pairs += (t * (t - 1)) / 2;
    v0 += t * (t - 1) * (t - 2);
    v1 += t * (t - 1) * (2 * t + 5);
  }
  return [pairs, v0, v1];
}

/**
 * Kendall tau-b with its asymptotic two-sided p-value (normal approximation with the tie-corrected
 * variance used by scipy `kendalltau(method="asymptotic")`).
 */
export function kendallTest(x: Sample, y: Sample): { tau: number; z: number; p: number } {
  const c = kendallCounts(x, y);
  const tau = tauBFromCounts(c);
  const n = c.n;
  const [xtie, x0, x1] = tieSums(x);
  const [ytie, y0, y1] = tieSums(y);
  const m = n * (n - 1);
  const variance =
    (m * (2 * n + 5) - x1 - y1) / 18 + (2 * xtie * ytie) / m + (n > 2 ? (x0 * y0) / (9 * m * (n - 2)) : 0);
  const z = (c.concordant - c.discordant) / Math.sqrt(variance);
  return { tau, z, p: Number.isFinite(z) ? normalTwoSidedP(z) : NaN };
}

/**
 * Rank correlation of a growing paired series. `push` is O(n) (updates Kendall pair counts against
 * every earlier pair); storage grows by doubling, so there is no allocation on most pushes.
 */
export class RunningRankCorrelation {
  private xs = new Float64Array(16);
  private ys = new Float64Array(16);
  private len = 0;
  private P = 0;
  private Q = 0;
  private T = 0;
  private U = 0;
  private B = 0;

  get n(): number {
    return this.len;
  }

  push(x: number, y: number): void {
    if (!Number.isFinite(x) || !Number.isFinite(y)) {
      throw new InputError("stats.value", `rank correlation needs finite values, got (${x}, ${y})`, "RunningRankCorrelation.push");
    }
    for (let j = 0; j < this.len; j++) {
      const dx = x - this.xs[j];
      const dy = y - this.ys[j];
      if (dx === 0) {
        if (dy === 0) this.B++;
        else this.T++;
      } else if (dy === 0) this.U++;
      else if (dx > 0 === dy > 0) this.P++;
      else this.Q++;
    }
    if (this.len === this.xs.length) {
      const nx = new Float64Array(this.len * 2);
      nx.set(this.xs);
      this.xs = nx;
      const ny = new Float64Array(this.len * 2);
      ny.set(this.ys);
      this.ys = ny;
    }
    this.xs[this.len] = x;
    this.ys[this.len] = y;
    this.len++;
  }

  counts(): KendallCounts {
    return { n: this.len, concordant: this.P, discordant: this.Q, tiesX: this.T, tiesY: this.U, tiesBoth: this.B };
  }

  /** Kendall tau-b (or tau-c) of all pairs so far; NaN with fewer than 2 pairs. */
  kendall(variant: KendallVariant = "b"): number {
    if (this.len < 2) return NaN;
    if (variant === "c") {
      const m = Math.min(distinctCount(this.xs.subarray(0, this.len)), distinctCount(this.ys.subarray(0, this.len)));
      return tauCFromCounts(this.counts(), m);
    }
    return tauBFromCounts(this.counts());
  }

  /** Spearman rho of all pairs so far (or of the last `window` pairs); NaN with fewer than 2 pairs. */
  spearman(window?: number): number {
    const w = window === undefined ? this.len : Math.min(window, this.len);
    if (w < 2) return NaN;
    const from = this.len - w;
    return spearman(this.xs.subarray(from, this.len), this.ys.subarray(from, this.len));
  }
}
