import { describe, expect, it } from "vitest";
import fc from "fast-check";
// Reference library from the npm registry: wilson-score@1.0.0 (devDependency). It exposes the Wilson
// score LOWER bound, f(successes, trials, z); the upper bound follows from the interval's symmetry
// U(x, n) = 1 - L(n - x, n).
import wilsonLowerBound from "wilson-score";
import { wilsonInterval } from "../../src/stats/wilson.js";
import { InputError } from "../../src/errors.js";

const Z95 = 1.959963984540054;
const refLower = (x: number, n: number, z = Z95): number => (wilsonLowerBound as (u: number, t: number, z?: number) => number)(x, n, z);

describe("Wilson score interval", () => {
  it("matches the wilson-score npm package (lower bound, and upper via symmetry)", () => {
    for (const [x, n] of [
      [81, 263],
      [15, 148],
      [1, 29],
      [7, 10],
      [50, 100],
      [3, 1000],
      [999, 1000],
    ]) {
      const ci = wilsonInterval(x, n);
      expect(ci.lower).toBeCloseTo(refLower(x, n), 12);
      expect(ci.upper).toBeCloseTo(1 - refLower(n - x, n), 12);
    }
    // 99 % level: z = 2.5758293035489004 (scipy norm.ppf(0.995)).
    const ci99 = wilsonInterval(81, 263, { confidence: 0.99 });
    expect(ci99.lower).toBeCloseTo(refLower(81, 263, 2.5758293035489004), 12);
  });

  it("property: agrees with the wilson-score package on random counts", () => {
    fc.assert(
      fc.property(
        fc.integer({ min: 1, max: 5000 }).chain((n) => fc.tuple(fc.integer({ min: 0, max: n }), fc.constant(n))),
        ([x, n]) => {
          const ci = wilsonInterval(x, n);
          expect(ci.lower).toBeCloseTo(Math.max(0, refLower(x, n)), 10);
          expect(ci.upper).toBeCloseTo(Math.min(1, 1 - refLower(n - x, n)), 10);
        },
      ),
    );
  });

  it("reproduces Newcombe (1998) Table I, score method with and without continuity correction", () => {
    // Newcombe RG (1998), Stat Med 17:857-872, Table I (values FROM MEMORY). Verified independently by
    // computing the two formulas in Python with scipy norm.ppf(0.975) during development: all agree at
    // 4 dp, e.g. 81/263 -> 0.255289..0.366210 and with correction 0.253509..0.368176.
    const cases: [number, number, [number, number], [number, number]][] = [
      [81, 263, [0.2553, 0.3662], [0.2535, 0.3682]],
      [15, 148, [0.0624, 0.1605], [0.0598, 0.1644]],
      [0, 20, [0, 0.1611], [0, 0.2005]],
      [1, 29, [0.0061, 0.1718], [0.0018, 0.1963]],
    ];
    for (const [x, n, plain, corrected] of cases) {
      const a = wilsonInterval(x, n);
      expect(Math.abs(a.lower - plain[0])).toBeLessThan(5e-5);
      expect(Math.abs(a.upper - plain[1])).toBeLessThan(5e-5);
      const b = wilsonInterval(x, n, { continuityCorrection: true });
      expect(Math.abs(b.lower - corrected[0])).toBeLessThan(5e-5);
      expect(Math.abs(b.upper - corrected[1])).toBeLessThan(5e-5);
      expect(a.point).toBe(x / n);
    }
  });

  it("property: contains p-hat, stays in [0, 1], and the corrected interval contains the plain one", () => {
    fc.assert(
      fc.property(
        fc.integer({ min: 1, max: 2000 }).chain((n) => fc.tuple(fc.integer({ min: 0, max: n }), fc.constant(n))),
        fc.double({ min: 0.5, max: 0.999, noNaN: true }),
        ([x, n], confidence) => {
          const p = x / n;
          for (const cc of [false, true]) {
            const ci = wilsonInterval(x, n, { confidence, continuityCorrection: cc });
            expect(ci.lower).toBeGreaterThanOrEqual(0);
            expect(ci.upper).toBeLessThanOrEqual(1);
            expect(ci.lower).toBeLessThanOrEqual(p);
            expect(ci.upper).toBeGreaterThanOrEqual(p);
          }
          const plain = wilsonInterval(x, n, { confidence });
          const corr = wilsonInterval(x, n, { confidence, continuityCorrection: true });
          expect(corr.lower).toBeLessThanOrEqual(plain.lower + 1e-12);
          expect(corr.upper).toBeGreaterThanOrEqual(plain.upper - 1e-12);
        },
      ),
    );
  });

  it("bad counts are typed errors", () => {
    expect(() => wilsonInterval(5, 4)).toThrow(InputError);
    expect(() => wilsonInterval(0, 0)).toThrow(InputError);
    expect(() => wilsonInterval(1.5, 4)).toThrow(InputError);
  });
});
