import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { EWMA_DEFAULTS, Ewma, ewmaBatch, ewmaLimits } from "../../src/monitor/detectors/ewma.js";
import { InputError } from "../../src/errors.js";

// NIST/SEMATECH e-Handbook section 6.3.2.4 via REFERENCE_VALUES.md section 2.2
const DATA = [52.0, 47.0, 53.0, 49.3, 50.1, 47.0, 51.0, 50.1, 51.2, 50.5, 49.6, 47.6, 49.9, 51.3, 47.8, 51.2, 52.6, 52.4, 53.6, 52.1];
const EWMA_COMPUTED = [
  50.6, 49.52, 50.564, 50.1848, 50.1594, 49.2116, 49.7481, 49.8537, 50.2576, 50.3303, 50.1112, 49.3578, 49.5205, 50.0543,
  49.378, 49.9246, 50.7272, 51.2291, 51.9403, 51.9882,
];
const EWMA_PRINTED = [
  50.6, 49.52, 50.56, 50.18, 50.16, 49.21, 49.75, 49.85, 50.26, 50.33, 50.11, 49.36, 49.52, 50.05, 49.38, 49.92, 50.73,
  51.23, 51.94, 51.99,
];
const NIST = { target: 50, sigma: 2.0539, lambda: 0.3, L: 3, limits: "steady" } as const;

describe("EWMA chart", () => {
  it("reproduces the NIST 6.3.2.4 EWMA column (computed 4 dp within 1e-4; printed 2 dp within 0.005)", () => {
    const r = ewmaBatch(DATA, NIST);
    for (let t = 0; t < DATA.length; t++) {
      expect(Math.abs(r.values[t] - EWMA_COMPUTED[t])).toBeLessThanOrEqual(1e-4);
      expect(Math.abs(r.values[t] - EWMA_PRINTED[t])).toBeLessThanOrEqual(0.005 + 1e-9);
    }
  });

  it("steady-state limits UCL 52.5884 / LCL 47.4115 (within 1e-4; unrounded 52.58843 / 47.41157) and no point outside", () => {
    const lim = ewmaLimits(NIST);
    expect(Math.abs(lim.upper - 52.5884)).toBeLessThanOrEqual(1e-4);
    expect(Math.abs(lim.lower - 47.4115)).toBeLessThanOrEqual(1e-4);
    expect(lim.upper).toBeCloseTo(52.58843, 5);
    expect(lim.lower).toBeCloseTo(47.41157, 5);
    const r = ewmaBatch(DATA, NIST);
    expect(r.alarms).toEqual([]);
    expect(r.firstAlarm).toBe(-1);
    expect(Array.from(r.upper).every((u) => u === lim.upper)).toBe(true);
  });

  it("NIST's upward trend over the last five periods is visible in the EWMA values", () => {
    // section 2.2: "an upward trend over the last five periods"
    const r = ewmaBatch(DATA, NIST);
    for (let t = 15; t < 20; t++) expect(r.values[t]).toBeGreaterThan(r.values[t - 1]);
  });

  it("exact time-varying limits start narrower and approach the steady-state limits", () => {
    // Montgomery's exact-limit formula: half-width * sqrt(1 - (1 - lambda)^(2t)); t = 1 gives L*sigma*lambda.
    const exact = { ...NIST, limits: "exact" as const };
    const first = ewmaLimits(exact, 1);
    expect(first.upper - 50).toBeCloseTo(3 * 2.0539 * 0.3, 12);
    const far = ewmaLimits(exact, 200);
    expect(far.upper).toBeCloseTo(ewmaLimits(NIST).upper, 12);
    const r = ewmaBatch(DATA, exact);
    for (let t = 1; t < DATA.length; t++) expect(r.upper[t]).toBeGreaterThan(r.upper[t - 1]);
  });

  it("a sustained shift signals (hand-derived: z_t -> target + 3 sigma exceeds a 3-sigma * 0.42 limit)", () => {
    const r = ewmaBatch(new Array(20).fill(50 + 3 * 2.0539), NIST);
    // z_1 = 50 + 0.3*6.1617 = 51.85 (inside), z_2 = 50 + 0.51*6.1617 = 53.14 (outside)
    expect(r.firstAlarm).toBe(1);
  });

  it("online and batch forms agree; reset returns to the target", () => {
    const chart = new Ewma(NIST);
    const r = ewmaBatch(DATA, NIST);
    DATA.forEach((x, i) => expect(chart.update(x).value).toBe(r.values[i]));
    chart.reset();
    expect(chart.value).toBe(50);
    expect(chart.n).toBe(0);
  });

  it("documents its defaults and rejects bad parameters", () => {
    // lambda = 0.2 with L = 3 sigma limits: common practice for EWMA charts (a usual textbook pairing,
    // e.g. Montgomery's SPC text, from memory, unconfirmed); not a NIST value (NIST's example uses 0.3).
    expect(EWMA_DEFAULTS).toEqual({ lambda: 0.2, L: 3, limits: "steady" });
    expect(() => new Ewma({ target: 0, sigma: 0 })).toThrow(InputError);
    expect(() => new Ewma({ target: 0, sigma: 1, lambda: 1.5 })).toThrow(InputError);
  });

  it("property: a constant in-control series never signals", () => {
    fc.assert(
      fc.property(
        fc.double({ min: -1e4, max: 1e4, noNaN: true }),
        fc.double({ min: 1e-3, max: 100, noNaN: true }),
        fc.double({ min: 0.01, max: 1, noNaN: true }),
        fc.constantFrom("steady" as const, "exact" as const),
        (target, sigma, lambda, limits) => {
          expect(ewmaBatch(new Array(50).fill(target), { target, sigma, lambda, limits }).alarms).toEqual([]);
        },
      ),
    );
  });
});
