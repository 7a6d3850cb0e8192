import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { logGamma } from "../../src/stats/gamma.js";
import { studentCdf, studentQuantile, studentTwoSidedP } from "../../src/stats/student.js";
import { normalCdf } from "../../src/stats/normal.js";

describe("Student t distribution", () => {
  it("quantiles match the NIST t table and REFERENCE_VALUES section 6", () => {
    // NIST e-Handbook 1.3.6.7.2 t table (from memory): t_{0.975,1} = 12.706, t_{0.975,3} = 3.182
    expect(Math.abs(studentQuantile(0.975, 1) - 12.706)).toBeLessThan(5e-4);
    expect(Math.abs(studentQuantile(0.975, 3) - 3.182)).toBeLessThan(5e-4);
    // section 6: t_{0.975,326} = 1.9673 (Boost example output); t_{0.975,136.87499} = 1.97745 (computed)
    expect(Math.abs(studentQuantile(0.975, 326) - 1.9673)).toBeLessThan(5e-5);
    expect(Math.abs(studentQuantile(0.975, 136.8749900936937) - 1.97745)).toBeLessThan(5e-6);
    // df = 1 is the Cauchy distribution: t_{0.975} = tan(0.475 pi) exactly (closed form)
    expect(studentQuantile(0.975, 1)).toBeCloseTo(Math.tan(0.475 * Math.PI), 9);
  });

  it("tail probabilities of the NIST AUTO83B statistics (section 6)", () => {
    expect(studentTwoSidedP(-12.62059, 326) / 5.273e-30).toBeCloseTo(1, 3);
    expect(studentTwoSidedP(-12.946267565658848, 136.8749900936937) / 1.571e-25).toBeCloseTo(1, 3);
  });

  it("closed forms: df = 2 has P(|T| > t) = 1 - t / sqrt(2 + t^2); log-gamma of integers is log((n-1)!)", () => {
    fc.assert(
      fc.property(fc.double({ min: -50, max: 50, noNaN: true }), (t) => {
        expect(studentTwoSidedP(t, 2)).toBeCloseTo(1 - Math.abs(t) / Math.sqrt(2 + t * t), 11);
      }),
    );
    expect(logGamma(10)).toBeCloseTo(Math.log(362880), 12);
    expect(logGamma(0.5)).toBeCloseTo(0.5 * Math.log(Math.PI), 12);
  });

  it("property: CDF inverts the quantile, and large df approaches the normal", () => {
    fc.assert(
      fc.property(fc.double({ min: 1e-6, max: 1 - 1e-6, noNaN: true }), fc.double({ min: 0.5, max: 500, noNaN: true }), (p, df) => {
        expect(studentCdf(studentQuantile(p, df), df)).toBeCloseTo(p, 9);
      }),
      { numRuns: 50 },
    );
    expect(studentCdf(1.5, 1e7)).toBeCloseTo(normalCdf(1.5), 7);
  });
});
