/**
 * Page-Hinkley test (Page 1954; Hinkley 1971) for a change in the mean of a stream.
 *
 * Running-mean convention: x̄_t = (1/t) * sum_{i<=t} x_i INCLUDES x_t (the form the general-purpose
 * stream libraries implement; the "current mean x̄_T" reading of the survey formula is degenerate).
 *   upward:   m_T = alpha*m_{T-1} + (x_T - x̄_T - delta),  M_T = min_{t<=T} m_t,  PH_T = m_T - M_T
 *   downward: m'_T = alpha*m'_{T-1} + (x_T - x̄_T + delta), M'_T = max_{t<=T} m'_t, PH'_T = M'_T - m'_T
 * Signal when a tested statistic EXCEEDS lambda, and only once at least `minInstances` observations
 * have been seen since the last reset. The running extremes start at +/-Infinity (the minimum and
 * maximum over t = 1..T); river's max-starts-at-minus-one quirk is not copied.
 *
 * Defaults (`PAGE_HINKLEY_DEFAULTS`) are those of river / scikit-multiflow / CapyMOA (delta 0.005,
 * lambda 50, alpha 1 - 1e-4, minInstances 30, both directions, reset after a detection), so a series
 * gives the same alarms here and in those libraries. lambda is in data units (a cumulative sum of
 * deviations): scale it to the series you watch; the monitor passes its own values.
 */
import { InputError } from "../../errors.js";
import type { AlarmSummary } from "./types.js";

export type PageHinkleyDirection = "up" | "down" | "both";

export interface PageHinkleyParams {
  /** Tolerated change magnitude delta >= 0. */
  readonly delta: number;
  /** Detection threshold lambda > 0. */
  readonly lambda: number;
  /** Forgetting factor alpha in (0, 1]; 1 means no forgetting. */
  readonly alpha: number;
  /** Observations needed (since the last reset) before a signal may fire; >= 1. */
  readonly minInstances: number;
  readonly direction: PageHinkleyDirection;
  /** Restart all state after a detection. */
  readonly resetOnAlarm: boolean;
}

export const PAGE_HINKLEY_DEFAULTS: PageHinkleyParams = {
  delta: 0.005,
  lambda: 50,
  alpha: 1 - 0.0001,
  minInstances: 30,
  direction: "both",
  resetOnAlarm: true,
};

function resolve(p: Partial<PageHinkleyParams> | undefined): PageHinkleyParams {
  const r = { ...PAGE_HINKLEY_DEFAULTS, ...(p ?? {}) };
  if (!(r.delta >= 0) || !Number.isFinite(r.delta)) throw new InputError("detector.pageHinkley", `delta must be finite and >= 0, got ${r.delta}`, "pageHinkley.delta");
  if (!(r.lambda > 0) || !Number.isFinite(r.lambda)) throw new InputError("detector.pageHinkley", `lambda must be finite and > 0, got ${r.lambda}`, "pageHinkley.lambda");
  if (!(r.alpha > 0 && r.alpha <= 1)) throw new InputError("detector.pageHinkley", `alpha must be in (0, 1], got ${r.alpha}`, "pageHinkley.alpha");
  if (!Number.isInteger(r.minInstances) || r.minInstances < 1) {
    throw new InputError("detector.pageHinkley", `minInstances must be an integer >= 1, got ${r.minInstances}`, "pageHinkley.minInstances");
  }
  if (r.direction !== "up" && r.direction !== "down" && r.direction !== "both") {
    throw new InputError("detector.pageHinkley", `direction must be "up", "down" or "both", got ${String(r.direction)}`, "pageHinkley.direction");
  }
  return r;
}

export interface PageHinkleyStep {
  /** Upward statistic PH_T = m_T - M_T (before any reset). */
  readonly up: number;
  /** Downward statistic PH'_T = M'_T - m'_T (before any reset). */
  readonly down: number;
  readonly alarmUp: boolean;
  readonly alarmDown: boolean;
  readonly alarm: boolean;
}

/** Online Page-Hinkley detector. */
export class PageHinkley {
  readonly params: PageHinkleyParams;
  private count = 0;
  private runningMean = 0;
  private sumInc = 0;
  private minInc = Infinity;
  private sumDec = 0;
  private maxDec = -Infinity;

  constructor(params?: Partial<PageHinkleyParams>) {
    this.params = resolve(params);
  }
  /** Observations since the last reset. */
  get n(): number {
    return this.count;
  }
  /** Running mean x̄_T (includes the latest observation). */
  get mean(): number {
    return this.runningMean;
  }
  /** Upward cumulative sum m_T. */
  get sumUp(): number {
    return this.sumInc;
  }
  /** Running minimum M_T of the upward sum (+Infinity before the first observation). */
  get minUp(): number {
    return this.minInc;
  }
  /** Downward cumulative sum m'_T. */
  get sumDown(): number {
    return this.sumDec;
  }
  /** Running maximum M'_T of the downward sum (-Infinity before the first observation). */
  get maxDown(): number {
    return this.maxDec;
  }

  update(x: number): PageHinkleyStep {
    const { delta, lambda, alpha, minInstances, direction } = this.params;
    this.count++;
    this.runningMean += (x - this.runningMean) / this.count;
    const dev = x - this.runningMean;
    this.sumInc = alpha * this.sumInc + (dev - delta);
    if (this.sumInc < this.minInc) this.minInc = this.sumInc;
    this.sumDec = alpha * this.sumDec + (dev + delta);
    if (this.sumDec > this.maxDec) this.maxDec = this.sumDec;
    const up = this.sumInc - this.minInc;
    const down = this.maxDec - this.sumDec;
    const armed = this.count >= minInstances;
    const alarmUp = armed && direction !== "down" && up > lambda;
    const alarmDown = armed && direction !== "up" && down > lambda;
    const alarm = alarmUp || alarmDown;
    if (alarm && this.params.resetOnAlarm) this.reset();
    return { up, down, alarmUp, alarmDown, alarm };
  }

  reset(): void {
    this.count = 0;
    this.runningMean = 0;
    this.sumInc = 0;
    this.minInc = Infinity;
    this.sumDec = 0;
    this.maxDec = -Infinity;
  }
}

export interface PageHinkleyResult extends AlarmSummary {
  readonly up: Float64Array;
  readonly down: Float64Array;
}

/** Batch Page-Hinkley: runs the online detector over the series and records both statistics. */
export function pageHinkleyBatch(xs: ArrayLike<number>, params?: Partial<PageHinkleyParams>): PageHinkleyResult {
  const det = new PageHinkley(params);
  const up = new Float64Array(xs.length);
  const down = new Float64Array(xs.length);
  const alarms: number[] = [];
  for (let i = 0; i < xs.length; i++) {
    const s = det.update(xs[i]);
    up[i] = s.up;
    down[i] = s.down;
    if (s.alarm) alarms.push(i);
  }
  return { up, down, alarms, firstAlarm: alarms.length > 0 ? alarms[0] : -1 };
}
