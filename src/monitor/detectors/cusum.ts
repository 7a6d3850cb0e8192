/**
 * Tabular CUSUM (Page 1954; NIST/SEMATECH e-Handbook section 6.3.2.3; Montgomery, Introduction to
 * Statistical Quality Control), upper and lower one-sided sums:
 *   S_hi(i) = max(0, S_hi(i-1) + x_i - target - k)
 *   S_lo(i) = max(0, S_lo(i-1) + target - k - x_i),   S_hi(0) = S_lo(0) = 0,
 * signalling when a sum EXCEEDS h (strictly greater).
 *
 * Parameters are in data units. `cusumParamsFromSigma` builds them from a process sigma with the
 * defaults k = 0.5 sigma (tuned to detect a 1-sigma shift fastest) and h = 5 sigma (in-control ARL
 * of roughly 465 observations for k = 0.5; Montgomery's table, from memory) - common practice. The
 * monitor watches long training curves, so we prefer the rarer false alarm of h = 5 over h = 4.
 *
 * `resetOnAlarm` (default false, so the batch form reproduces the published tables, which keep
 * accumulating after a signal) zeroes both sums after a signal, the usual online restart.
 */
import { InputError } from "../../errors.js";
import type { AlarmSummary } from "./types.js";

export interface CusumParams {
  /** In-control mean mu_0. */
  readonly target: number;
  /** Allowance (slack) k >= 0, data units. */
  readonly k: number;
  /** Decision interval h > 0, data units. */
  readonly h: number;
  /** Zero both sums after a signal. Default false. */
  readonly resetOnAlarm?: boolean;
}

export const CUSUM_SIGMA_DEFAULTS = { kSigma: 0.5, hSigma: 5 } as const;

/** Parameters in sigma units: k = kSigma * sigma, h = hSigma * sigma. */
export function cusumParamsFromSigma(
  target: number,
  sigma: number,
  opts: { kSigma?: number; hSigma?: number; resetOnAlarm?: boolean } = {},
): CusumParams {
  if (!(sigma > 0) || !Number.isFinite(sigma)) {
    throw new InputError("detector.cusum", `sigma must be a positive finite number, got ${sigma}`, "cusum.sigma");
  }
  return {
    target,
    k: (opts.kSigma ?? CUSUM_SIGMA_DEFAULTS.kSigma) * sigma,
    h: (opts.hSigma ?? CUSUM_SIGMA_DEFAULTS.hSigma) * sigma,
    resetOnAlarm: opts.resetOnAlarm ?? false,
  };
}

function checkParams(p: CusumParams): void {
  if (!Number.isFinite(p.target)) throw new InputError("detector.cusum", `target must be finite, got ${p.target}`, "cusum.target");
  if (!(p.k >= 0) || !Number.isFinite(p.k)) throw new InputError("detector.cusum", `k must be a finite number >= 0, got ${p.k}`, "cusum.k");
  if (!(p.h > 0) || !Number.isFinite(p.h)) throw new InputError("detector.cusum", `h must be a finite number > 0, got ${p.h}`, "cusum.h");
}

export interface CusumStep {
  /** Upper sum after this observation (before any reset). */
  readonly hi: number;
  /** Lower sum after this observation (before any reset). */
  readonly lo: number;
  readonly alarmHi: boolean;
  readonly alarmLo: boolean;
  readonly alarm: boolean;
}

/** Online tabular CUSUM. `update` is allocation-free apart from the returned record. */
export class Cusum {
  private sHi = 0;
  private sLo = 0;
  private count = 0;
  constructor(readonly params: CusumParams) {
    checkParams(params);
  }
  get hi(): number {
    return this.sHi;
  }
  get lo(): number {
    return this.sLo;
  }
  /** Observations seen. */
  get n(): number {
    return this.count;
  }
  update(x: number): CusumStep {
    const { target, k, h } = this.params;
    const hi = Math.max(0, this.sHi + x - target - k);
    const lo = Math.max(0, this.sLo + target - k - x);
    const alarmHi = hi > h;
    const alarmLo = lo > h;
    const alarm = alarmHi || alarmLo;
    this.count++;
    if (alarm && this.params.resetOnAlarm) {
      this.sHi = 0;
      this.sLo = 0;
    } else {
      this.sHi = hi;
      this.sLo = lo;
    }
    return { hi, lo, alarmHi, alarmLo, alarm };
  }
  reset(): void {
    this.sHi = 0;
    this.sLo = 0;
    this.count = 0;
  }
}

export interface CusumResult extends AlarmSummary {
  readonly hi: Float64Array;
  readonly lo: Float64Array;
}

/** Batch tabular CUSUM over a whole series (same recursion as `Cusum`). */
export function cusumBatch(xs: ArrayLike<number>, params: CusumParams): CusumResult {
  checkParams(params);
  const { target, k, h } = params;
  const n = xs.length;
  const hiArr = new Float64Array(n);
  const loArr = new Float64Array(n);
  const alarms: number[] = [];
  let sHi = 0;
  let sLo = 0;
  for (let i = 0; i < n; i++) {
    const x = xs[i];
    sHi = Math.max(0, sHi + x - target - k);
    sLo = Math.max(0, sLo + target - k - x);
    hiArr[i] = sHi;
    loArr[i] = sLo;
    if (sHi > h || sLo > h) {
      alarms.push(i);
      if (params.resetOnAlarm) {
        sHi = 0;
        sLo = 0;
      }
    }
  }
  return { hi: hiArr, lo: loArr, alarms, firstAlarm: alarms.length > 0 ? alarms[0] : -1 };
}
