/**
 * EWMA control chart (Roberts 1959; NIST/SEMATECH e-Handbook section 6.3.2.4):
 *   z_0 = target,  z_t = lambda * x_t + (1 - lambda) * z_{t-1},
 * signalling when z_t falls strictly outside target -+ L * sigma * sqrt(lambda/(2 - lambda)) (the
 * steady-state limits NIST uses), or, with `limits: "exact"`, the time-varying limits
 * target -+ L * sigma * sqrt(lambda/(2 - lambda) * (1 - (1 - lambda)^(2t))), which are tighter at the
 * start.
 *
 * Defaults (`EWMA_DEFAULTS`): lambda = 0.2, L = 3, steady-state limits - common practice (Montgomery
 * recommends lambda in [0.05, 0.25]; lambda = 0.2 with L = 3 has an in-control ARL of a few hundred,
 * from memory). A small lambda smooths the noisy per-episode scores the monitor feeds it.
 */
import { InputError } from "../../errors.js";
import type { AlarmSummary } from "./types.js";

export type EwmaLimits = "steady" | "exact";

export interface EwmaParams {
  /** In-control mean; also z_0. */
  readonly target: number;
  /** Process standard deviation of individual observations. */
  readonly sigma: number;
  /** Smoothing weight in (0, 1]. */
  readonly lambda: number;
  /** Width of the limits in sigma units. */
  readonly L: number;
  readonly limits: EwmaLimits;
}

export const EWMA_DEFAULTS = { lambda: 0.2, L: 3, limits: "steady" as EwmaLimits } as const;

export type EwmaInput = Pick<EwmaParams, "target" | "sigma"> & Partial<Omit<EwmaParams, "target" | "sigma">>;

function resolve(p: EwmaInput): EwmaParams {
  const r: EwmaParams = {
    target: p.target,
    sigma: p.sigma,
    lambda: p.lambda ?? EWMA_DEFAULTS.lambda,
    L: p.L ?? EWMA_DEFAULTS.L,
    limits: p.limits ?? EWMA_DEFAULTS.limits,
  };
  if (!Number.isFinite(r.target)) throw new InputError("detector.ewma", `target must be finite, got ${r.target}`, "ewma.target");
  if (!(r.sigma > 0) || !Number.isFinite(r.sigma)) throw new InputError("detector.ewma", `sigma must be finite and > 0, got ${r.sigma}`, "ewma.sigma");
  if (!(r.lambda > 0 && r.lambda <= 1)) throw new InputError("detector.ewma", `lambda must be in (0, 1], got ${r.lambda}`, "ewma.lambda");
  if (!(r.L > 0) || !Number.isFinite(r.L)) throw new InputError("detector.ewma", `L must be finite and > 0, got ${r.L}`, "ewma.L");
  if (r.limits !== "steady" && r.limits !== "exact") {
    throw new InputError("detector.ewma", `limits must be "steady" or "exact", got ${String(r.limits)}`, "ewma.limits");
  }
  return r;
}

/** Half-width of the limits at observation t (1-based); t is ignored for steady-state limits. */
export function ewmaHalfWidth(params: EwmaInput, t = Infinity): number {
  const p = resolve(params);
  const steady = p.lambda / (2 - p.lambda);
  const factor = p.limits === "exact" && Number.isFinite(t) ? steady * (1 - Math.pow(1 - p.lambda, 2 * t)) : steady;
  return p.L * p.sigma * Math.sqrt(factor);
}

/** Control limits at observation t (1-based). */
export function ewmaLimits(params: EwmaInput, t = Infinity): { lower: number; upper: number } {
  const hw = ewmaHalfWidth(params, t);
  return { lower: params.target - hw, upper: params.target + hw };
}

export interface EwmaStep {
  readonly value: number;
  readonly lower: number;
  readonly upper: number;
  readonly alarm: boolean;
}

/** Online EWMA chart. */
export class Ewma {
  readonly params: EwmaParams;
  private z: number;
  private count = 0;
  private readonly steadyHalf: number;
  constructor(params: EwmaInput) {
    this.params = resolve(params);
    this.z = this.params.target;
    this.steadyHalf = ewmaHalfWidth(this.params);
  }
  get value(): number {
    return this.z;
  }
  get n(): number {
    return this.count;
  }
  update(x: number): EwmaStep {
    const { lambda, target, limits } = this.params;
    this.count++;
    this.z = lambda * x + (1 - lambda) * this.z;
    const hw = limits === "exact" ? this.steadyHalf * Math.sqrt(1 - Math.pow(1 - lambda, 2 * this.count)) : this.steadyHalf;
    const lower = target - hw;
    const upper = target + hw;
    return { value: this.z, lower, upper, alarm: this.z > upper || this.z < lower };
  }
  reset(): void {
    this.z = this.params.target;
    this.count = 0;
  }
}

export interface EwmaResult extends AlarmSummary {
  readonly values: Float64Array;
  readonly lower: Float64Array;
  readonly upper: Float64Array;
}

/** Batch EWMA chart over a whole series. */
export function ewmaBatch(xs: ArrayLike<number>, params: EwmaInput): EwmaResult {
  const chart = new Ewma(params);
  const n = xs.length;
  const values = new Float64Array(n);
  const lower = new Float64Array(n);
  const upper = new Float64Array(n);
  const alarms: number[] = [];
  for (let i = 0; i < n; i++) {
    const s = chart.update(xs[i]);
    values[i] = s.value;
    lower[i] = s.lower;
    upper[i] = s.upper;
    if (s.alarm) alarms.push(i);
  }
  return { values, lower, upper, alarms, firstAlarm: alarms.length > 0 ? alarms[0] : -1 };
}
