import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { Cusum, cusumBatch, cusumParamsFromSigma } from "../../src/monitor/detectors/cusum.js";
import { InputError } from "../../src/errors.js";

// NIST/SEMATECH e-Handbook section 6.3.2.3 via REFERENCE_VALUES.md section 2.1
const NIST = [
  324.925, 324.675, 324.725, 324.35, 325.35, 325.225, 324.125, 324.525, 325.225, 324.6, 324.625, 325.15, 328.325,
  327.25, 327.825, 328.5, 326.675, 327.775, 326.875, 328.35,
];
// printed 2 dp columns (section 2.1 "printed" column)
const NIST_SHI = [0, 0, 0, 0, 0.03, 0, 0, 0, 0, 0, 0, 0, 3.01, 4.94, 7.45, 10.63, 11.99, 14.44, 16.0, 19.04];
const NIST_SLO = [0, 0.01, 0, 0.33, 0, 0, 0.56, 0.72, 0.17, 0.25, 0.31, 0, 0, 0, 0, 0, 0, 0, 0, 0];
// computed full-precision columns (section 2.1 "computed")
const NIST_SHI_EXACT = [0, 0, 0, 0, 0.0325, 0, 0, 0, 0, 0, 0, 0, 3.0075, 4.94, 7.4475, 10.63, 11.9875, 14.445, 16.0025, 19.035];
const NIST_SLO_EXACT = [0, 0.0075, 0, 0.3325, 0, 0, 0.5575, 0.715, 0.1725, 0.255, 0.3125, 0, 0, 0, 0, 0, 0, 0, 0, 0];

describe("tabular CUSUM", () => {
  it("reproduces NIST 6.3.2.3: S_hi / S_lo columns (printed 2 dp, +-0.005) and signals at groups 14-20", () => {
    const r = cusumBatch(NIST, { target: 325, k: 0.3175, h: 4.1959 });
    for (let i = 0; i < NIST.length; i++) {
      expect(Math.abs(r.hi[i] - NIST_SHI[i])).toBeLessThanOrEqual(0.005 + 1e-9);
      expect(Math.abs(r.lo[i] - NIST_SLO[i])).toBeLessThanOrEqual(0.005 + 1e-9);
      expect(r.hi[i]).toBeCloseTo(NIST_SHI_EXACT[i], 9);
      expect(r.lo[i]).toBeCloseTo(NIST_SLO_EXACT[i], 9);
    }
    // first signal group 14 (1-based) = index 13; groups 14..20 flagged
    expect(r.firstAlarm).toBe(13);
    expect(r.alarms).toEqual([13, 14, 15, 16, 17, 18, 19]);
  });

  it("NIST in sigma units (k = 0.5 sigma, h = 4.1959/0.635 sigma) gives identical signals", () => {
    const sigma = 1.27 / Math.sqrt(4);
    const p = cusumParamsFromSigma(325, sigma, { kSigma: 0.5, hSigma: 4.1959 / 0.635 });
    expect(p.k).toBeCloseTo(0.3175, 12);
    expect(cusumBatch(NIST, p).alarms).toEqual([13, 14, 15, 16, 17, 18, 19]);
  });

  it("tcllib changepoint.test: 2 dp data, k = 0.5 sigma, h = 4 sigma -> first change at index 12, batch and online", () => {
    // tcltk/tcllib modules/math/changepoint.test via section 2.1 "Second check"
    const rounded = NIST.map((x) => Math.round(x * 100) / 100);
    const p = cusumParamsFromSigma(325, 0.635, { kSigma: 0.5, hSigma: 4 });
    expect(p.h).toBeCloseTo(2.54, 12);
    expect(cusumBatch(rounded, p).firstAlarm).toBe(12);
    const online = new Cusum(p);
    let first = -1;
    for (let i = 0; i < rounded.length && first < 0; i++) if (online.update(rounded[i]).alarm) first = i;
    expect(first).toBe(12);
  });

  it("Montgomery & Runger Example 16-6 (Table 16-8): s_H, s_L columns and never exceeds H = 10", () => {
    // section 2.3: mu0 = 99, K = 1, H = 10
    const x = [
      102.0, 94.8, 98.3, 98.4, 102.0, 98.5, 99.0, 97.7, 100.0, 98.1, 101.3, 98.7, 101.1, 98.4, 97.0, 96.7, 100.3, 101.4,
      97.2, 101.0,
    ];
    const sH = [2.0, 0, 0, 0, 2.0, 0.5, 0, 0, 0, 0, 1.3, 0, 1.1, 0, 0, 0, 0.3, 1.7, 0, 1.0];
    const sL = [0, 3.2, 2.9, 2.5, 0, 0, 0, 0.3, 0, 0, 0, 0, 0, 0, 1.0, 2.3, 0, 0, 0.8, 0];
    const r = cusumBatch(x, { target: 99, k: 1, h: 10 });
    for (let i = 0; i < x.length; i++) {
      expect(r.hi[i]).toBeCloseTo(sH[i], 9);
      expect(r.lo[i]).toBeCloseTo(sL[i], 9);
    }
    expect(r.alarms).toEqual([]);
    expect(r.firstAlarm).toBe(-1);
  });

  it("online and batch forms agree step by step, with and without reset", () => {
    for (const resetOnAlarm of [false, true]) {
      const p = { target: 325, k: 0.3175, h: 4.1959, resetOnAlarm };
      const batch = cusumBatch(NIST, p);
      const online = new Cusum(p);
      const alarms: number[] = [];
      NIST.forEach((x, i) => {
        const s = online.update(x);
        expect(s.hi).toBe(batch.hi[i]);
        expect(s.lo).toBe(batch.lo[i]);
        if (s.alarm) alarms.push(i);
      });
      expect(alarms).toEqual(batch.alarms);
    }
    // With reset the first signal is unchanged and the sums restart from 0 (hand-computed:
    // after group 14 resets, group 15 gives 2.825 - 0.3175 = 2.5075 < h).
    const r = cusumBatch(NIST, { target: 325, k: 0.3175, h: 4.1959, resetOnAlarm: true });
    expect(r.firstAlarm).toBe(13);
    expect(r.hi[14]).toBeCloseTo(2.5075, 9);
    expect(r.alarms).not.toContain(14);
  });

  it("rejects bad parameters with typed errors", () => {
    expect(() => cusumBatch([1], { target: 0, k: -1, h: 1 })).toThrow(InputError);
    expect(() => new Cusum({ target: 0, k: 0.5, h: 0 })).toThrow(InputError);
  });

  // Dyadic values (multiples of 1/4) keep every sum exact, so the invariance checks are exact.
  const quarter = (lo: number, hi: number) => fc.integer({ min: lo * 4, max: hi * 4 }).map((v) => v / 4);

  it("property: sums are non-negative; a constant in-control series never alarms for h > 0", () => {
    fc.assert(
      fc.property(fc.array(quarter(-50, 50), { maxLength: 60 }), quarter(-10, 10), quarter(0, 5), quarter(0.25, 20), (xs, target, k, h) => {
        const r = cusumBatch(xs, { target, k, h });
        for (let i = 0; i < xs.length; i++) {
          expect(r.hi[i]).toBeGreaterThanOrEqual(0);
          expect(r.lo[i]).toBeGreaterThanOrEqual(0);
        }
        const flat = cusumBatch(new Array(60).fill(target), { target, k, h });
        expect(flat.alarms).toEqual([]);
      }),
    );
  });

  it("property: shifting data and target by a constant leaves the alarms unchanged", () => {
    fc.assert(
      fc.property(fc.array(quarter(-50, 50), { maxLength: 60 }), quarter(-10, 10), quarter(0, 5), quarter(0.25, 20), quarter(-1000, 1000), (xs, target, k, h, c) => {
        const a = cusumBatch(xs, { target, k, h });
        const b = cusumBatch(xs.map((x) => x + c), { target: target + c, k, h });
        expect(b.alarms).toEqual(a.alarms);
        expect(Array.from(b.hi)).toEqual(Array.from(a.hi));
      }),
    );
  });
});
