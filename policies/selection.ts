/**
 * Action selection every learner shares: greedy selection with lowest-index ties, and epsilon-greedy
 * selection with an integer compare on `rng.uint32()` (so the shared benchmark is reproducible bit for
 * bit).
 *
 * Learners see only a `TabularEnv` (src/model/learner-view.ts). Nothing under policies/ may import the
 * model types' held-out score, the solvers, the monitor, the audit or the pressure code; a test checks it.
 */
import type { Rng } from "../src/rng/rng.js";

export const TWO32 = 4294967296;

/** Index of the largest of q[base .. base+nA-1]; replaces only on strictly greater, so ties go to the lowest index. */
export function argmaxRow(q: Float64Array, base: number, nA: number): number {
  let best = 0;
  let m = q[base];
  for (let b = 1; b < nA; b++) {
    const v = q[base + b];
    if (v > m) {
      m = v;
      best = b;
    }
  }
  return best;
}

/** Largest of q[base .. base+nA-1] (exact, order-independent). */
export function maxRow(q: Float64Array, base: number, nA: number): number {
  let m = q[base];
  for (let b = 1; b < nA; b++) if (q[base + b] > m) m = q[base + b];
  return m;
}

/**
 * Epsilon-greedy over row `base` of q. `threshold = epsilon * 2^32`: explore iff the first draw
 * u1 < threshold (for epsilon 0.1 this is the benchmark's integer compare u1 < 429496730); an explore
 * step draws u2 and takes floor(u2 * nA / 2^32) (= u2 >>> 30 for four actions; both products are exact
 * in binary64). One draw on an exploit step, two on an explore step.
 */
export function epsilonGreedy(q: Float64Array, base: number, nA: number, threshold: number, rng: Rng): number {
  if (rng.uint32() < threshold) return randomAction(rng, nA);
  return argmaxRow(q, base, nA);
}

/** The explore step's action: one draw u, floor(u * nA / 2^32) (uniform over 0..nA-1). */
export function randomAction(rng: Rng, nA: number): number {
  return Math.floor((rng.uint32() * nA) / TWO32);
}

/** Probability that `epsilonGreedy` returns the greedy action (ties broken to the lowest index). */
export function greedyProbability(epsilon: number, nA: number): number {
  return 1 - epsilon + epsilon / nA;
}
