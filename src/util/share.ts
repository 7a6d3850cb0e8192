/**
 * Words for normalized scores (0 = uniform-random behaviour, 1 = the optimum) that stay readable
 * outside 0..1: a share is only a percentage while it is one. A policy below random gets "worse than
 * random behaviour" and how far below, in units of the gap between random and optimal behaviour (a
 * plain multiple, never a percentage above 100). Pure.
 */

/** "0.21 times" / "1.98 times": how far below random a normalized score lies (norm < 0). */
export function belowRandomGaps(norm: number): string {
  const x = Math.abs(norm);
  return `${x >= 0.1 ? x.toFixed(2) : x.toPrecision(2)} times`;
}

/** "worse than random behaviour (below random by 0.21 times the gap between random and optimal behaviour)". */
export function worseThanRandom(norm: number): string {
  return `worse than random behaviour (below random by ${belowRandomGaps(norm)} the gap between random and optimal behaviour)`;
}

/**
 * A normalized score as a percentage when it lies in 0..1, else words: below 0 "worse than random
 * behaviour (...)", above 1 "above the optimum" (a relative or estimated optimum can be exceeded).
 */
export function shareText(norm: number, digits = 0): string {
  if (!Number.isFinite(norm)) return "–";
  if (norm < 0) return worseThanRandom(norm);
  if (norm > 1) return `above the optimum (by ${(norm - 1).toFixed(2)} times the gap between random and optimal behaviour)`;
  return `${(100 * norm).toFixed(digits)}%`;
}

/**
 * What optimizing a reward gives up, from the normalized regret (regret / (intent-optimal - random)):
 * "gives up 70.5% of the achievable intent" or, past the whole range, "does worse than random
 * behaviour (below random by 0.21 times ...)".
 */
export function regretText(regretNorm: number, digits = 1): string {
  if (!Number.isFinite(regretNorm)) return "gives up an unknown share of the achievable intent";
  if (regretNorm > 1) return `does ${worseThanRandom(1 - regretNorm)}`;
  return `gives up ${(100 * Math.max(0, regretNorm)).toFixed(digits)}% of the achievable intent`;
}
