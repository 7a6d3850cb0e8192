import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { erfc, normalCdf, normalQuantile } from "../../src/stats/normal.js";

describe("standard normal helpers", () => {
  it("quantiles match standard table values", () => {
    // Familiar table values (from memory), confirmed with scipy.stats.norm.ppf 1.17 during development.
    expect(normalQuantile(0.975)).toBeCloseTo(1.959963984540054, 14);
    expect(normalQuantile(0.995)).toBeCloseTo(2.5758293035489004, 14);
    expect(normalQuantile(0.9)).toBeCloseTo(1.2815515655446004, 14);
    expect(normalQuantile(0.3)).toBeCloseTo(-0.5244005127080409, 14);
    expect(normalQuantile(1e-10)).toBeCloseTo(-6.361340902404056, 12);
    expect(normalQuantile(0.5)).toBe(0);
  });

  it("erfc matches Abramowitz & Stegun Table 7.1 and scipy", () => {
    // A&S Table 7.1: erf(1) = 0.8427007929, erf(0.5) = 0.5204998778 (from memory; scipy.special.erf
    // gives 0.8427007929497148 and 0.5204998778130465). Normal tail: Phi(-3) = 0.0013498980316300933,
    // 1 - Phi(5) = 2.866515718791933e-07 (scipy norm.cdf / norm.sf).
    expect(1 - erfc(1)).toBeCloseTo(0.8427007929497148, 14);
    expect(1 - erfc(0.5)).toBeCloseTo(0.5204998778130465, 14);
    expect(normalCdf(-3) / 0.0013498980316300933).toBeCloseTo(1, 12);
    expect(normalCdf(-5) / 2.866515718791933e-7).toBeCloseTo(1, 11);
  });

  it("property: the CDF inverts the quantile", () => {
    fc.assert(
      fc.property(fc.double({ min: 1e-12, max: 1 - 1e-12, noNaN: true }), (p) => {
        expect(normalCdf(normalQuantile(p))).toBeCloseTo(p, 12);
      }),
    );
  });
});
