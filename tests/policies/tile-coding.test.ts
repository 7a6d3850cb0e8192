/** Tile coding (Sutton & Barto 2018, section 9.5.4) and linear semi-gradient SARSA (section 10.1). */
import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { TileCoder } from "../../policies/tile-coding.js";
import { trainLinearSarsa } from "../../policies/linear-sarsa.js";
import { createRng } from "../../src/rng/rng.js";
import { corridorModel, envOf, greedyRollout } from "./textbook-models.js";

const coder2 = new TileCoder({ tilings: 8, tiles: 10, low: [0, 0], high: [1, 1] });
const active = (c: TileCoder, x: number[]) => {
  const out = new Int32Array(c.tilings);
  c.active(x, out);
  return Array.from(out);
};

describe("tile coding", () => {
  it("activates exactly one tile per tiling, each within its tiling's index range", () => {
    fc.assert(
      fc.property(fc.double({ min: -0.5, max: 1.5, noNaN: true }), fc.double({ min: -0.5, max: 1.5, noNaN: true }), (x, y) => {
        const a = active(coder2, [x, y]);
        expect(a.length).toBe(8);
        a.forEach((idx, i) => {
          expect(idx).toBeGreaterThanOrEqual(i * coder2.perTiling);
          expect(idx).toBeLessThan((i + 1) * coder2.perTiling);
        });
      }),
      { seed: 42, numRuns: 200 },
    );
  });

  it("nearby points share most tiles, points farther apart than a tile width share none", () => {
    const a = active(coder2, [0.5, 0.5]);
    const near = active(coder2, [0.505, 0.5]);
    const far = active(coder2, [0.75, 0.2]);
    const shared = (u: number[], v: number[]) => u.filter((x, i) => x === v[i]).length;
    expect(shared(a, near)).toBeGreaterThanOrEqual(6); // a shift of w/20 crosses at most ~half a unit w/8 per dimension
    expect(shared(a, far)).toBe(0);
  });

  it("generalisation falls off with distance (S&B 9.5.4: shared tiles decrease as points move apart)", () => {
    const a = active(coder2, [0.3, 0.3]);
    const counts = [0.0, 0.02, 0.05, 0.08, 0.12].map((d) => active(coder2, [0.3 + d, 0.3]).filter((x, i) => x === a[i]).length);
    for (let i = 1; i < counts.length; i++) expect(counts[i]).toBeLessThanOrEqual(counts[i - 1]);
    expect(counts[0]).toBe(8);
    expect(counts[counts.length - 1]).toBe(0);
  });

  it("offsets follow the odd displacement vector (1, 3, 5, ...) in units of w/n (from memory: S&B 9.5.4)", () => {
    const c = new TileCoder({ tilings: 8, tiles: 4, low: [0, 0, 0], high: [1, 1, 1] });
    for (let i = 0; i < 8; i++) {
      expect(c.offset[i * 3 + 0]).toBeCloseTo(((i * 1) % 8) / 8, 12);
      expect(c.offset[i * 3 + 1]).toBeCloseTo(((i * 3) % 8) / 8, 12);
      expect(c.offset[i * 3 + 2]).toBeCloseTo(((i * 5) % 8) / 8, 12);
    }
    // asymmetric: tiling 1 is not displaced along the diagonal (its offsets differ per dimension)
    expect(c.offset[3]).not.toBe(c.offset[4]);
  });
});

describe("linear semi-gradient SARSA", () => {
  it("tile-coded corridor: the greedy policy walks straight to the goal (19 steps, the optimum)", () => {
    const model = corridorModel(20);
    for (const seed of [1, 2, 3]) {
      const res = trainLinearSarsa(envOf(model), { features: "tiles", tiling: { tilings: 4, tiles: 10 }, alpha: 0.5, gamma: 1, epsilon: 0.1 }, { steps: 20000, rng: createRng(seed) });
      const r = greedyRollout(model, res.agent, 200);
      expect(r.reachedTerminal).toBe(true);
      expect(r.states.length - 1).toBe(19);
    }
  });

  it("one-hot features make it tabular SARSA: identical Q tables for the same seed", async () => {
    const { trainSarsa } = await import("../../policies/sarsa.js");
    const model = corridorModel(8);
    const opts = () => ({ steps: 3000, rng: createRng(5) });
    const lin = trainLinearSarsa(envOf(model), { features: "one-hot", alpha: 0.5, gamma: 1, epsilon: 0.2 }, opts());
    const tab = trainSarsa(envOf(model), { alpha: 0.5, gamma: 1, epsilon: 0.2 }, opts());
    expect(Array.from(lin.agent.qValues!())).toEqual(Array.from(tab.agent.qValues!()));
  });
});
