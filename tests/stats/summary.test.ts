import { describe, expect, it } from "vitest";
import fc from "fast-check";
import {
  aggregateIqm,
  aggregateMean,
  aggregateMedian,
  aggregateOptimalityGap,
  interquartileMean,
  mean,
  median,
  optimalityGap,
  quantile,
  sampleSd,
  scoreMatrix,
  trimMean,
} from "../../src/stats/summary.js";
import { InputError } from "../../src/errors.js";
import { rliableMatrices } from "../helpers/rliable.js";

const range = (a: number, b: number) => Array.from({ length: b - a + 1 }, (_, i) => a + i);

describe("interquartile mean (rliable: scipy trim_mean 0.25, floor cut, no fractional weighting)", () => {
  it("matches the REFERENCE_VALUES section 7 examples", () => {
    // REFERENCE_VALUES.md section 7 (rliable metrics.py, scipy trim_mean docstring convention)
    expect(interquartileMean(range(0, 9))).toBeCloseTo(4.5, 12);
    expect(interquartileMean(range(1, 10))).toBeCloseTo(5.5, 12);
    expect(interquartileMean([1, 2, 3, 4, 5, 6, 7])).toBeCloseTo(4.0, 12); // cuts 1 at each end
    // cuts floor(0.25*9) = 2 at each end: (4+8+16+32+64)/5 = 24.8, not Wikipedia's weighted 23.777...
    expect(interquartileMean([1, 2, 4, 8, 16, 32, 64, 128, 256])).toBeCloseTo(24.8, 12);
    expect(interquartileMean([1, 2, 4, 8, 16, 32, 64, 128, 256])).not.toBeCloseTo(107 / 4.5, 3);
  });

  it("matches the HandWiki / Wikipedia worked example (n = 12)", () => {
    // handwiki.org/wiki/Interquartile_mean via REFERENCE_VALUES.md section 7: IQM 6.5, mean 8.5
    const xs = [5, 8, 4, 38, 8, 6, 9, 7, 7, 3, 1, 6];
    expect(interquartileMean(xs)).toBeCloseTo(6.5, 12);
    expect(mean(xs)).toBeCloseTo(8.5, 12);
  });

  it("does not depend on input order and ignores the tails", () => {
    // Hand-computed: outliers in the trimmed quarter do not move the IQM.
    expect(interquartileMean([1e9, 2, 3, -1e9])).toBeCloseTo(2.5, 12);
  });

  it("property: IQM lies between min and max", () => {
    fc.assert(
      fc.property(fc.array(fc.double({ min: -1e6, max: 1e6, noNaN: true }), { minLength: 1, maxLength: 40 }), (xs) => {
        const v = interquartileMean(xs);
        return v >= Math.min(...xs) - 1e-9 && v <= Math.max(...xs) + 1e-9;
      }),
    );
  });

  it("trim proportion 0 is the plain mean", () => {
    fc.assert(
      fc.property(fc.array(fc.integer({ min: -1000, max: 1000 }), { minLength: 1, maxLength: 30 }), (xs) => {
        expect(trimMean(xs, 0)).toBeCloseTo(mean(xs), 9);
      }),
    );
  });
});

describe("rliable aggregates over runs x tasks", () => {
  // rliable tests/rliable/metrics_test.py via REFERENCE_VALUES.md section 7 (X 4 runs x 2 tasks, Y 3 x 2)
  const { X, Y } = rliableMatrices();
  it("median = mean = IQM = 1.5 for X and 2 for Y", () => {
    for (const f of [aggregateMean, aggregateMedian, aggregateIqm]) {
      expect(f(X)).toBeCloseTo(1.5, 12);
      expect(f(Y)).toBeCloseTo(2, 12);
    }
  });

  it("mean and median are over per-task run means (hand-computed)", () => {
    // task means [1, 5, 12] -> mean 6, median 5; pooled IQM of 6 scores cuts 1 each end.
    const M = scoreMatrix([
      [0, 4, 10],
      [2, 6, 14],
    ]);
    expect(aggregateMean(M)).toBeCloseTo(6, 12);
    expect(aggregateMedian(M)).toBeCloseTo(5, 12);
    expect(aggregateIqm(M)).toBeCloseTo((2 + 4 + 6 + 10) / 4, 12);
  });

  it("optimality gap = gamma - mean(min(x, gamma)) (rliable definition, hand-computed)", () => {
    expect(optimalityGap([0.5, 1.2, 0.8, 2.0])).toBeCloseTo(1 - (0.5 + 1 + 0.8 + 1) / 4, 12);
    // 5 - (3 + 4) / 2 = 1.5
    expect(optimalityGap([3, 4], 5)).toBeCloseTo(1.5, 12);
    // per-task run means [0.65, 1.6] -> min(., 1) = [0.65, 1] -> 1 - 0.825 = 0.175
    expect(aggregateOptimalityGap(scoreMatrix([[0.5, 1.2], [0.8, 2.0]]))).toBeCloseTo(0.175, 12);
  });

  it("rejects ragged rows with a typed error", () => {
    expect(() => scoreMatrix([[1, 2], [3]])).toThrow(InputError);
  });
});

describe("quantile, median, sample sd", () => {
  it("matches numpy's percentile docstring (linear interpolation)", () => {
    // numpy.percentile docstring: a = [[10, 7, 4], [3, 2, 1]]; percentile(a, 50) = 3.5 (from memory,
    // recomputed by hand: sorted 1 2 3 4 7 10, position 2.5 -> 3.5)
    expect(median([10, 7, 4, 3, 2, 1])).toBeCloseTo(3.5, 12);
    // axis=0 column medians [6.5, 4.5, 2.5]
    expect(median([10, 3])).toBeCloseTo(6.5, 12);
    // Hyndman & Fan type 7 by hand: [1,2,3,4] q=0.25 -> 1 + 0.75 = 1.75
    expect(quantile([4, 3, 2, 1], 0.25)).toBeCloseTo(1.75, 12);
    expect(quantile([4, 3, 2, 1], 0)).toBe(1);
    expect(quantile([4, 3, 2, 1], 1)).toBe(4);
  });

  it("sample sd uses n - 1", () => {
    // Wikipedia "Standard deviation" example (from memory): 2,4,4,4,5,5,7,9 has population sd 2;
    // recomputed: sum of squared deviations 32, so the sample sd is sqrt(32/7).
    expect(sampleSd([2, 4, 4, 4, 5, 5, 7, 9])).toBeCloseTo(Math.sqrt(32 / 7), 12);
  });

  it("empty input is a typed error", () => {
    expect(() => mean([])).toThrow(InputError);
    expect(() => interquartileMean([])).toThrow(InputError);
  });
});
