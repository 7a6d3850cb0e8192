import { describe, expect, it } from "vitest";
import fc from "fast-check";
import {
  mannWhitneyU,
  probabilityOfImprovement,
  probabilityOfImprovementCI,
  probabilityOfImprovementTask,
} from "../../src/stats/improvement.js";
import { scoreMatrix } from "../../src/stats/summary.js";
import { createRng } from "../../src/rng/rng.js";
import { InputError } from "../../src/errors.js";
import { rliableMatrices } from "../helpers/rliable.js";

/** Independent oracle: average S(x, y) over all pairs (1 if x > y, 1/2 if equal, 0 otherwise). */
function pairAverage(xs: number[], ys: number[]): number {
  let s = 0;
  for (const x of xs) for (const y of ys) s += x > y ? 1 : x === y ? 0.5 : 0;
  return s / (xs.length * ys.length);
}

describe("probability of improvement (rliable probability_of_improvement)", () => {
  // rliable tests/rliable/metrics_test.py via REFERENCE_VALUES.md section 7 (X 4 runs x 2 tasks, Y 3 x 2)
  const { X, Y } = rliableMatrices();

  it("P(X > Y) = 1/3 on the rliable test matrices, U = 4 of 12 pairs per task", () => {
    expect(probabilityOfImprovement(X, Y)).toBeCloseTo(1 / 3, 12);
    expect(mannWhitneyU([1, 2, 1, 2], [1, 2, 3])).toBe(4);
    expect(mannWhitneyU([2, 2, 1, 1], [1, 2, 3])).toBe(4);
  });

  it("Mann-Whitney U matches scipy's mannwhitneyu docstring example", () => {
    // scipy.stats.mannwhitneyu docstring (males vs females ages, from Wikipedia): U1 = 17.0.
    // From memory; recomputed with scipy 1.17 during development (statistic=17.0).
    expect(mannWhitneyU([19, 22, 16, 29, 24], [20, 11, 17, 12])).toBe(17);
  });

  it("identical columns give 0.5 per task (rliable docstring)", () => {
    expect(probabilityOfImprovementTask([3, 1, 2], [1, 2, 3])).toBe(0.5);
    expect(probabilityOfImprovement(X, X)).toBe(0.5);
  });

  it("property: equals the all-pairs average with ties counted 1/2", () => {
    const small = fc.array(fc.integer({ min: 0, max: 5 }), { minLength: 1, maxLength: 12 });
    fc.assert(
      fc.property(small, small, (xs, ys) => {
        expect(probabilityOfImprovementTask(xs, ys)).toBeCloseTo(pairAverage(xs, ys), 12);
      }),
    );
  });

  it("property: P(X > Y) + P(Y > X) = 1", () => {
    const rows = (n: number) =>
      fc.array(fc.array(fc.integer({ min: 0, max: 4 }), { minLength: n, maxLength: n }), { minLength: 1, maxLength: 8 });
    fc.assert(
      fc.property(
        fc.integer({ min: 1, max: 4 }).chain((tasks) => fc.tuple(rows(tasks), rows(tasks))),
        ([a, b]) => {
          const x = scoreMatrix(a);
          const y = scoreMatrix(b);
          expect(probabilityOfImprovement(x, y) + probabilityOfImprovement(y, x)).toBeCloseTo(1, 12);
        },
      ),
    );
  });

  it("CI: separated samples give [1, 1]; the rliable example gives a seeded interval around 1/3", () => {
    const hi = scoreMatrix([[5, 6], [7, 8]]);
    const lo = scoreMatrix([[0, 1], [2, 3], [4, 4]]);
    expect(probabilityOfImprovementCI(hi, lo, createRng(1), { reps: 300 })).toEqual({ point: 1, lower: 1, upper: 1 });
    const ci = probabilityOfImprovementCI(X, Y, createRng(2), { reps: 1000 });
    expect(ci.point).toBeCloseTo(1 / 3, 12);
    expect(ci.lower).toBeLessThanOrEqual(ci.point);
    expect(ci.upper).toBeGreaterThanOrEqual(ci.point);
    expect(ci.lower).toBeGreaterThanOrEqual(0);
    expect(ci.upper).toBeLessThanOrEqual(1);
    expect(ci.upper - ci.lower).toBeGreaterThan(0);
    expect(probabilityOfImprovementCI(X, Y, createRng(2), { reps: 1000 })).toEqual(ci);
  });

  it("task bootstrap keeps task m of X paired with task m of Y", () => {
    // Hand-computed: task 0 has P = 1, task 1 has P = 0. Resampling tasks jointly gives replicate
    // means 0, 0.5, 1 w.p. 1/4, 1/2, 1/4, so the 40 % interval is [0.5, 0.5]. Drawing tasks
    // separately for X and Y would mix columns and give [0.25, 0.75].
    const x = scoreMatrix([[1, 0], [1, 0]]);
    const y = scoreMatrix([[0, 1], [0, 1]]);
    const ci = probabilityOfImprovementCI(x, y, createRng(3), { reps: 4000, confidence: 0.4, taskBootstrap: true });
    expect(ci).toEqual({ point: 0.5, lower: 0.5, upper: 0.5 });
    const wide = probabilityOfImprovementCI(x, y, createRng(3), { reps: 4000, taskBootstrap: true });
    expect([wide.lower, wide.upper]).toEqual([0, 1]);
  });

  it("mismatched task counts are a typed error", () => {
    expect(() => probabilityOfImprovement(X, scoreMatrix([[1, 2, 3]]))).toThrow(InputError);
  });
});
