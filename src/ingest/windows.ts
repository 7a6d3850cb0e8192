/**
 * Per-episode values pooled into checkpoints over step windows, and the trailing rolling mean that
 * trainers log as "mean return of the last 100 episodes". Pure.
 *
 * Window W: checkpoint k (k = 0, 1, ...) pools the episodes that END in (kW, (k+1)W] on the step axis and
 * is reported at step (k+1)W. Its interval is the Student t interval for the mean,
 *   mean +- t_{(1+level)/2, n-1} * sd / sqrt(n),  sd the sample standard deviation (divisor n - 1),
 * the textbook one-sample t interval (e.g. NIST/SEMATECH e-Handbook of Statistical Methods, 7.2.2.1).
 * With one episode there is no sd and no interval (null), not a made-up width.
 */
import { InputError } from "../errors.js";
import { type Interval, mean, sampleSd, studentQuantile } from "../stats/index.js";

/** One per-episode value on the step axis: `step` is the cumulative step count when the episode ended. */
export interface StepValue {
  readonly step: number;
  readonly value: number;
}

export interface WindowCheckpoint {
  /** Window end (k+1)W: the step the checkpoint is reported at. */
  readonly step: number;
  /** Episodes pooled. */
  readonly count: number;
  readonly mean: number;
  /** Sample standard deviation; null with fewer than 2 episodes. */
  readonly sd: number | null;
  /** Student t interval for the mean at `level`; null with fewer than 2 episodes. */
  readonly interval: Interval | null;
  /** True when a later episode ended beyond this window, so no further episode can join it. */
  readonly closed: boolean;
}

/**
 * Checkpoints of `points` (in any order) over windows of `window` steps; windows with no episode are
 * left out. `level` is the interval's confidence level (0.95 by default).
 */
export function windowCheckpoints(points: readonly StepValue[], window: number, level = 0.95): WindowCheckpoint[] {
  if (!(Number.isFinite(window) && window > 0)) throw new InputError("ingest.window", `the checkpoint window must be a positive number of steps, got ${window}`, "window");
  if (!(level > 0 && level < 1)) throw new InputError("ingest.window", `the interval level must be in (0, 1), got ${level}`, "level");
  const groups = new Map<number, number[]>();
  let lastStep = -Infinity;
  for (const p of points) {
    const k = Math.max(0, Math.ceil(p.step / window) - 1);
    const g = groups.get(k);
    if (g === undefined) groups.set(k, [p.value]);
    else g.push(p.value);
    if (p.step > lastStep) lastStep = p.step;
  }
  return [...groups.keys()]
    .sort((a, b) => a - b)
    .map((k) => {
      const xs = groups.get(k)!;
      const m = mean(xs);
      const end = (k + 1) * window;
      if (xs.length < 2) return { step: end, count: xs.length, mean: m, sd: null, interval: null, closed: lastStep > end };
      const sd = sampleSd(xs);
      const half = (studentQuantile((1 + level) / 2, xs.length - 1) * sd) / Math.sqrt(xs.length);
      return { step: end, count: xs.length, mean: m, sd, interval: { point: m, lower: m - half, upper: m + half }, closed: lastStep > end };
    });
}

/**
 * Mean of the values of the last (up to) `n` episodes that ended at or before `step` (`points` in episode
 * order, steps non-decreasing). Undefined when no episode has ended by then.
 */
export function rollingMean(points: readonly StepValue[], step: number, n = 100): number | undefined {
  let hi = 0;
  while (hi < points.length && points[hi].step <= step) hi++;
  if (hi === 0) return undefined;
  const lo = Math.max(0, hi - n);
  let acc = 0;
  for (let i = lo; i < hi; i++) acc += points[i].value;
  return acc / (hi - lo);
}
