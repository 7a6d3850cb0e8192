/**
 * Wilson score interval for a binomial proportion (Wilson 1927), optionally with continuity
 * correction (Newcombe 1998, method 4). Used for alarm and "gaming" rates over episodes.
 *
 * Without correction, with p = x/n and z = Phi^-1(1 - alpha/2):
 *   (p + z^2/(2n) -+ z * sqrt(p(1-p)/n + z^2/(4n^2))) / (1 + z^2/n)
 * With correction:
 *   L = (2np + z^2 - 1 - z*sqrt(z^2 - 2 - 1/n + 4p(n(1-p) + 1))) / (2(n + z^2)),  L = 0 if x = 0
 *   U = (2np + z^2 + 1 + z*sqrt(z^2 + 2 - 1/n + 4p(n(1-p) - 1))) / (2(n + z^2)),  U = 1 if x = n
 * Both are clamped to [0, 1] (the corrected form can step a hair outside for tiny n).
 * Defaults: confidence 0.95, no continuity correction (the plain score interval has coverage close to
 * nominal on average; the corrected one is conservative - Newcombe 1998, from memory).
 */
import { InputError } from "../errors.js";
import type { Interval } from "./interval.js";
import { normalQuantile } from "./normal.js";

export interface WilsonOptions {
  /** Two-sided confidence level in (0, 1). Default 0.95. */
  readonly confidence?: number;
  /** Apply the continuity correction. Default false. */
  readonly continuityCorrection?: boolean;
}

/** Wilson score interval; `point` is the sample proportion x/n. */
export function wilsonInterval(successes: number, trials: number, opts?: WilsonOptions): Interval {
  if (!Number.isInteger(trials) || trials < 1) {
    throw new InputError("stats.binomial", `trials must be a positive integer, got ${trials}`, "wilson.trials");
  }
  if (!Number.isInteger(successes) || successes < 0 || successes > trials) {
    throw new InputError(
      "stats.binomial",
      `successes must be an integer in [0, ${trials}], got ${successes}`,
      "wilson.successes",
    );
  }
  const confidence = opts?.confidence ?? 0.95;
  if (!(confidence > 0 && confidence < 1)) {
    throw new InputError("stats.binomial", `confidence must be in (0, 1), got ${confidence}`, "wilson.confidence");
  }
  const n = trials;
  const p = successes / n;
  const z = normalQuantile(1 - (1 - confidence) / 2);
  const z2 = z * z;
  let lower: number;
  let upper: number;
  if (opts?.continuityCorrection) {
    const denom = 2 * (n + z2);
    lower = successes === 0 ? 0 : (2 * n * p + z2 - 1 - z * Math.sqrt(z2 - 2 - 1 / n + 4 * p * (n * (1 - p) + 1))) / denom;
    upper = successes === n ? 1 : (2 * n * p + z2 + 1 + z * Math.sqrt(z2 + 2 - 1 / n + 4 * p * (n * (1 - p) - 1))) / denom;
  } else {
    const centre = p + z2 / (2 * n);
    const half = z * Math.sqrt((p * (1 - p)) / n + z2 / (4 * n * n));
    const denom = 1 + z2 / n;
    lower = successes === 0 ? 0 : (centre - half) / denom;
    upper = successes === n ? 1 : (centre + half) / denom;
  }
  return { point: p, lower: Math.max(0, Math.min(lower, p)), upper: Math.min(1, Math.max(upper, p)) };
}
