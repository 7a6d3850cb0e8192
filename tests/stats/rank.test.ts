import { describe, expect, it } from "vitest";
import fc from "fast-check";
import {
  RunningRankCorrelation,
  averageRanks,
  kendall,
  kendallCounts,
  kendallTauB,
  kendallTauC,
  kendallTest,
  spearman,
  spearmanTest,
} from "../../src/stats/rank.js";

describe("Spearman rho (REFERENCE_VALUES.md section 5)", () => {
  it("with ties: scipy spearmanr docstring, rho = 8/sqrt(95)", () => {
    // scipy spearmanr docstring: x = [1,2,3,4,5], y = [5,6,7,8,7] -> 0.8207826816681233
    expect(Array.from(averageRanks([5, 6, 7, 8, 7]))).toEqual([1, 2, 3.5, 5, 3.5]);
    expect(spearman([1, 2, 3, 4, 5], [5, 6, 7, 8, 7])).toBeCloseTo(0.8207826816681233, 14);
    expect(spearman([1, 2, 3, 4, 5], [5, 6, 7, 8, 7])).toBeCloseTo(8 / Math.sqrt(95), 14);
    // asymptotic two-sided p (t distribution, n - 2 df): 0.0885870053135438..., allow 1e-9 (section 5)
    expect(Math.abs(spearmanTest([1, 2, 3, 4, 5], [5, 6, 7, 8, 7]).p - 0.0885870053135438)).toBeLessThan(1e-9);
  });

  it("without ties: Wikipedia IQ vs TV hours, rho = -29/165", () => {
    // Wikipedia "Spearman's rank correlation coefficient" example via section 5
    const iq = [106, 86, 100, 101, 99, 103, 97, 113, 112, 110];
    const tv = [7, 0, 27, 50, 28, 29, 20, 12, 6, 17];
    expect(spearman(iq, tv)).toBeCloseTo(-29 / 165, 14);
    // Kendall on the same data (section 5, computed): -1/9
    expect(kendallTauB(iq, tv)).toBeCloseTo(-1 / 9, 14);
  });
});

describe("Kendall tau (REFERENCE_VALUES.md section 5)", () => {
  it("tau-b with ties: scipy kendalltau docstring, -sqrt(2)/3, P=2 Q=6 T=1 U=0", () => {
    const x = [12, 2, 1, 12, 2];
    const y = [1, 4, 7, 1, 0];
    const c = kendallCounts(x, y);
    expect([c.concordant, c.discordant, c.tiesX, c.tiesY, c.tiesBoth]).toEqual([2, 6, 1, 0, 1]);
    expect(kendallTauB(x, y)).toBeCloseTo(-0.47140452079103173, 14);
    // asymptotic two-sided p (scipy, cross-checked against R cor.test exact=FALSE): 0.2827454599327748
    expect(Math.abs(kendallTest(x, y).p - 0.2827454599327748)).toBeLessThan(1e-12);
  });

  it("tau-b and tau-c with more ties: scipy test suite", () => {
    const x = [1, 2, 2, 4, 4, 6, 6, 8, 9, 9];
    const y = [1, 2, 4, 4, 4, 4, 8, 8, 8, 10];
    expect(kendall(x, y)).toBeCloseTo(0.8589556903873334, 14);
    expect(kendallTauC(x, y)).toBeCloseTo(0.825, 14);
  });

  it("constant input gives NaN (undefined), as scipy", () => {
    expect(kendallTauB([1, 1, 1], [1, 2, 3])).toBeNaN();
    expect(spearman([1, 2, 3], [4, 4, 4])).toBeNaN();
  });
});

const pairs = fc
  .integer({ min: 2, max: 25 })
  .chain((n) =>
    fc.tuple(
      fc.array(fc.integer({ min: -5, max: 5 }), { minLength: n, maxLength: n }),
      fc.array(fc.integer({ min: -5, max: 5 }), { minLength: n, maxLength: n }),
    ),
  );

describe("rank correlation properties", () => {
  it("in [-1, 1] (or NaN only for a constant input) and symmetric", () => {
    fc.assert(
      fc.property(pairs, ([x, y]) => {
        const constant = new Set(x).size < 2 || new Set(y).size < 2;
        for (const f of [spearman, kendallTauB, kendallTauC]) {
          const r = f(x, y);
          if (constant) {
            expect(r).toBeNaN();
          } else {
            expect(r).toBeGreaterThanOrEqual(-1);
            expect(r).toBeLessThanOrEqual(1);
            expect(f(y, x)).toBeCloseTo(r, 12);
          }
        }
      }),
    );
  });

  it("perfectly monotone data give +1 / -1", () => {
    fc.assert(
      fc.property(fc.uniqueArray(fc.integer({ min: -1000, max: 1000 }), { minLength: 2, maxLength: 30 }), (x) => {
        const y = x.map((v) => 3 * v + 1);
        const z = x.map((v) => -v * v * v);
        expect(spearman(x, y)).toBeCloseTo(1, 12);
        expect(kendallTauB(x, y)).toBe(1);
        expect(spearman(x, z)).toBeCloseTo(-1, 12);
        expect(kendallTauB(x, z)).toBe(-1);
      }),
    );
  });

  it("the running helper equals the batch functions at every length", () => {
    fc.assert(
      fc.property(pairs, ([x, y]) => {
        const run = new RunningRankCorrelation();
        for (let i = 0; i < x.length; i++) {
          run.push(x[i], y[i]);
          if (i === 0) {
            expect(run.kendall()).toBeNaN();
            continue;
          }
          const xs = x.slice(0, i + 1);
          const ys = y.slice(0, i + 1);
          expect(run.counts()).toEqual(kendallCounts(xs, ys));
          const kb = kendallTauB(xs, ys);
          const kc = kendallTauC(xs, ys);
          const s = spearman(xs, ys);
          if (Number.isNaN(kb)) expect(run.kendall()).toBeNaN();
          else expect(run.kendall()).toBeCloseTo(kb, 12);
          if (Number.isNaN(kc)) expect(run.kendall("c")).toBeNaN();
          else expect(run.kendall("c")).toBeCloseTo(kc, 12);
          if (Number.isNaN(s)) expect(run.spearman()).toBeNaN();
          else expect(run.spearman()).toBeCloseTo(s, 12);
        }
        if (x.length >= 3) {
          const w = spearman(x.slice(-3), y.slice(-3));
          if (Number.isNaN(w)) expect(run.spearman(3)).toBeNaN();
          else expect(run.spearman(3)).toBeCloseTo(w, 12);
        }
      }),
      { numRuns: 60 },
    );
  });

  it("the running helper stays equal to the batch tau-b past its initial capacity (16 pairs)", () => {
    // Self-consistency: 40 pairs built from the section 5 tied example, shifted by 10 per block.
    const run = new RunningRankCorrelation();
    const x = [1, 2, 2, 4, 4, 6, 6, 8, 9, 9];
    const y = [1, 2, 4, 4, 4, 4, 8, 8, 8, 10];
    for (let i = 0; i < 40; i++) run.push(x[i % 10] + 10 * Math.floor(i / 10), y[i % 10] + 10 * Math.floor(i / 10));
    expect(run.n).toBe(40);
    const xs = Array.from({ length: 40 }, (_, i) => x[i % 10] + 10 * Math.floor(i / 10));
    const ys = Array.from({ length: 40 }, (_, i) => y[i % 10] + 10 * Math.floor(i / 10));
    expect(run.kendall()).toBeCloseTo(kendallTauB(xs, ys), 12);
  });
});
