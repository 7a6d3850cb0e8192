/** Helpers for tests that read a deterministic policy's recurrent loop off a finite model. */
import { expect } from "vitest";
import type { FiniteModel } from "../../src/model/types.js";

/**
 * Follow a deterministic policy from the (single) start until a state repeats; average a feature over
 * the cycle it ends in. Asserts that every pair on the way has exactly one outcome (a slip-free model).
 */
export function cycleAverage(m: FiniteModel, policy: ArrayLike<number>, feature: string): number {
  const f = m.features.indexOf(feature);
  const firstSeen = new Map<number, number>();
  const values: number[] = [];
  let s = m.start.indexOf(1);
  while (!firstSeen.has(s)) {
    firstSeen.set(s, values.length);
    const o = m.saStart[s * m.nActions + policy[s]];
    expect(m.saStart[s * m.nActions + policy[s] + 1] - o).toBe(1); // deterministic
    values.push(m.featureValues[o * m.features.length + f]);
    s = m.next[o];
  }
  const cyc = values.slice(firstSeen.get(s));
  return cyc.reduce((x, y) => x + y, 0) / cyc.length;
}
