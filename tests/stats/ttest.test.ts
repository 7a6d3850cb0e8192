import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { pooledT, twoSampleT, welchT } from "../../src/stats/ttest.js";
import { InputError } from "../../src/errors.js";

describe("two-sample t statistics (NIST e-Handbook 1.3.5.3, AUTO83B; REFERENCE_VALUES.md section 6)", () => {
  const us = { n: 249, mean: 20.14458, sd: 6.4147 };
  const japan = { n: 79, mean: 30.48101, sd: 6.10771 };

  it("pooled: t = -12.62059, df = 326, s_p = 6.34260", () => {
    const r = pooledT(us, japan);
    expect(r.df).toBe(326);
    expect(Math.abs(r.t - -12.62059)).toBeLessThan(5e-5);
    expect(Math.abs((r.sp ?? NaN) - 6.3426)).toBeLessThan(5e-5);
    // two-sided p = 5.273e-30 (section 6, Boost example output)
    expect(r.p / 5.273e-30).toBeCloseTo(1, 3);
  });

  it("Welch: t = -12.94627, df = 136.87499, SE = 0.798410", () => {
    const r = welchT(us, japan);
    // computed full-precision values from section 6
    expect(r.t).toBeCloseTo(-12.946267565658848, 9);
    expect(r.df).toBeCloseTo(136.8749900936937, 9);
    expect(Math.abs(r.se - 0.79841)).toBeLessThan(5e-6);
    // two-sided p = 1.571e-25 (section 6)
    expect(r.p / 1.571e-25).toBeCloseTo(1, 3);
  });

  it("raw samples: equal-size equal-variance groups give the same t for both methods (hand-derived)", () => {
    // With n1 = n2 and s1 = s2 the Welch and pooled statistics coincide and Welch df = 2n - 2.
    const a = [1, 2, 3, 4, 5];
    const b = [3, 4, 5, 6, 7];
    const w = twoSampleT(a, b, "welch");
    const p = twoSampleT(a, b, "pooled");
    expect(w.t).toBeCloseTo(p.t, 12);
    expect(w.df).toBeCloseTo(8, 12);
    // mean difference -2, s = sqrt(2.5), se = sqrt(2.5 * 2 / 5) = 1 -> t = -2
    expect(p.t).toBeCloseTo(-2, 12);
  });

  it("property: swapping the groups flips the sign and keeps df", () => {
    const g = fc.record({
      n: fc.integer({ min: 2, max: 500 }),
      mean: fc.double({ min: -100, max: 100, noNaN: true }),
      sd: fc.double({ min: 0.01, max: 50, noNaN: true }),
    });
    fc.assert(
      fc.property(g, g, (a, b) => {
        for (const f of [welchT, pooledT]) {
          const ab = f(a, b);
          const ba = f(b, a);
          expect(ba.t).toBeCloseTo(-ab.t, 9);
          expect(ba.df).toBeCloseTo(ab.df, 9);
        }
        // Welch-Satterthwaite df lies between min(n1, n2) - 1 and n1 + n2 - 2
        const w = welchT(a, b);
        expect(w.df).toBeGreaterThanOrEqual(Math.min(a.n, b.n) - 1 - 1e-9);
        expect(w.df).toBeLessThanOrEqual(a.n + b.n - 2 + 1e-9);
      }),
    );
  });

  it("a group of one is a typed error", () => {
    expect(() => welchT({ n: 1, mean: 0, sd: 0 }, japan)).toThrow(InputError);
  });
});
