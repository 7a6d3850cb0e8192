/**
 * Summary statistics and the score-matrix aggregates used by batch comparison.
 *
 * Data shape: a `ScoreMatrix` is N runs x M tasks, stored row-major in one Float64Array
 * (`values[run * tasks + task]`). The aggregates follow
 * Agarwal, Schwarzer, Castro, Courville and Bellemare 2021, "Deep Reinforcement Learning at the Edge of the Statistical Precipice", NeurIPS:
 * - mean / median: the mean / median over tasks of the per-task run means;
 * - IQM: `scipy.stats.trim_mean(scores, 0.25, axis=None)`: all N*M scores pooled, floor(0.25*N*M)
 *   cut from EACH end, plain mean of the rest (no fractional weighting);
 * - optimality gap: gamma - mean(min(scores, gamma)), gamma = 1 by default.
 *
 * Pure: no I/O, no randomness. Empty input is a typed `InputError`.
 */
import { InputError } from "../errors.js";

export type Sample = ArrayLike<number>;

/** N runs x M tasks, row-major: `values[run * tasks + task]`. */
export interface ScoreMatrix {
  readonly runs: number;
  readonly tasks: number;
  readonly values: Float64Array;
}

function requireNonEmpty(xs: Sample, what: string): void {
  if (xs.length === 0) throw new InputError("stats.empty", `${what} needs at least one value, got none`, what);
}

/** Build a `ScoreMatrix` from rows (one row per run, one column per task). Rows must be equal length. */
export function scoreMatrix(rows: readonly (readonly number[])[], where = "scores"): ScoreMatrix {
  if (rows.length === 0 || rows[0].length === 0) {
    throw new InputError("stats.shape", "a score matrix needs at least one run and one task", where);
  }
  const tasks = rows[0].length;
  const values = new Float64Array(rows.length * tasks);
  for (let r = 0; r < rows.length; r++) {
    const row = rows[r];
    if (row.length !== tasks) {
      throw new InputError(
        "stats.shape",
        `run ${r} has ${row.length} task scores, expected ${tasks} like run 0; give every run one score per task`,
        `${where}[${r}]`,
      );
    }
    for (let t = 0; t < tasks; t++) values[r * tasks + t] = row[t];
  }
  return { runs: rows.length, tasks, values };
}

/** The runs of one task as a new array (column `task`). */
export function taskColumn(m: ScoreMatrix, task: number): Float64Array {
  const out = new Float64Array(m.runs);
  for (let r = 0; r < m.runs; r++) out[r] = m.values[r * m.tasks + task];
  return out;
}

export function sum(xs: Sample): number {
  let s = 0;
  for (let i = 0; i < xs.length; i++) s += xs[i];
  return s;
}

export function mean(xs: Sample): number {
  requireNonEmpty(xs, "mean");
  return sum(xs) / xs.length;
}

/** Sample standard deviation (divisor n - 1). Needs n >= 2. */
export function sampleSd(xs: Sample): number {
  if (xs.length < 2) throw new InputError("stats.empty", `sample sd needs at least 2 values, got ${xs.length}`, "sampleSd");
  const m = mean(xs);
  let ss = 0;
  for (let i = 0; i < xs.length; i++) {
    const d = xs[i] - m;
    ss += d * d;
  }
  return Math.sqrt(ss / (xs.length - 1));
}

/** Ascending sorted copy. */
export function sorted(xs: Sample): Float64Array {
  const out = Float64Array.from(xs as ArrayLike<number>);
  out.sort();
  return out;
}

/** Quantile of an ascending-sorted sample, linear interpolation (numpy's default, Hyndman & Fan type 7). */
export function quantileSorted(s: Sample, q: number): number {
  requireNonEmpty(s, "quantile");
  if (!(q >= 0 && q <= 1)) throw new InputError("stats.quantile", `quantile level must be in [0, 1], got ${q}`, "quantile");
  const h = (s.length - 1) * q;
  const lo = Math.floor(h);
  const hi = Math.min(lo + 1, s.length - 1);
  return s[lo] + (h - lo) * (s[hi] - s[lo]);
}

/** Quantile, linear interpolation between order statistics (numpy default). */
export function quantile(xs: Sample, q: number): number {
  return quantileSorted(sorted(xs), q);
}

export function median(xs: Sample): number {
  return quantile(xs, 0.5);
}

/**
 * Trimmed mean as `scipy.stats.trim_mean(xs, proportion)`: cut floor(proportion * n) values from each
 * end of the sorted sample and average the rest. No fractional weighting.
 */
export function trimMean(xs: Sample, proportion: number): number {
  requireNonEmpty(xs, "trimMean");
  if (!(proportion >= 0 && proportion < 0.5)) {
    throw new InputError("stats.trim", `proportion to cut must be in [0, 0.5), got ${proportion}`, "trimMean");
  }
  const s = sorted(xs);
  const cut = Math.floor(proportion * s.length);
  let acc = 0;
  for (let i = cut; i < s.length - cut; i++) acc += s[i];
  return acc / (s.length - 2 * cut);
}

/** Interquartile mean (Agarwal et al. 2021): `trimMean(xs, 0.25)`. */
export function interquartileMean(xs: Sample): number {
  return trimMean(xs, 0.25);
}

/** Optimality gap: gamma - mean(min(x, gamma)). Agarwal et al. 2021 use gamma = 1 on normalized scores. */
export function optimalityGap(xs: Sample, gamma = 1): number {
  requireNonEmpty(xs, "optimalityGap");
  let acc = 0;
  for (let i = 0; i < xs.length; i++) acc += Math.min(xs[i], gamma);
  return gamma - acc / xs.length;
}

/** Per-task run means (length M). */
export function taskMeans(m: ScoreMatrix): Float64Array {
  const out = new Float64Array(m.tasks);
  for (let r = 0; r < m.runs; r++) {
    const base = r * m.tasks;
    for (let t = 0; t < m.tasks; t++) out[t] += m.values[base + t];
  }
  for (let t = 0; t < m.tasks; t++) out[t] /= m.runs;
  return out;
}

/** A statistic of one score matrix (used by the bootstrap). */
export type Aggregate = (m: ScoreMatrix) => number;
export type AggregateName = "mean" | "median" | "iqm" | "optimalityGap";

/** Mean over tasks of per-task run means (Agarwal et al. 2021, mean). */
export const aggregateMean: Aggregate = (m) => mean(taskMeans(m));
/** Median over tasks of per-task run means (Agarwal et al. 2021, median). */
export const aggregateMedian: Aggregate = (m) => median(taskMeans(m));
/** IQM of all N*M scores pooled (Agarwal et al. 2021, interquartile mean). */
export const aggregateIqm: Aggregate = (m) => interquartileMean(m.values);
/** Optimality gap of all scores pooled, gamma = 1 (Agarwal et al. 2021, optimality gap). */
export const aggregateOptimalityGap: Aggregate = (m) => optimalityGap(m.values, 1);

export const AGGREGATES: Readonly<Record<AggregateName, Aggregate>> = {
  mean: aggregateMean,
  median: aggregateMedian,
  iqm: aggregateIqm,
  optimalityGap: aggregateOptimalityGap,
};
