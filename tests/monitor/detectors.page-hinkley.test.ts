import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { PAGE_HINKLEY_DEFAULTS, PageHinkley, pageHinkleyBatch } from "../../src/monitor/detectors/page-hinkley.js";
import { InputError } from "../../src/errors.js";

// REFERENCE_VALUES.md section 4 worked example (computed from the definition): delta 0.1, lambda 1,
// alpha 1, ten 0s then ten 1s, upward test, minInstances 1, no reset.
const STEP = [...new Array(10).fill(0), ...new Array(10).fill(1)];
const EXAMPLE = { delta: 0.1, lambda: 1, alpha: 1, minInstances: 1, direction: "up", resetOnAlarm: false } as const;

describe("Page-Hinkley", () => {
  it("reproduces the section 4 table: m_T, M_T, PH_T and the first alarm at T = 12", () => {
    const ph = new PageHinkley(EXAMPLE);
    const rows: Record<number, { mean: number; m: number; M: number; PH: number; alarm: boolean }> = {};
    STEP.forEach((x, i) => {
      const s = ph.update(x);
      rows[i + 1] = { mean: ph.mean, m: ph.sumUp, M: ph.minUp, PH: s.up, alarm: s.alarm };
    });
    for (let T = 1; T <= 10; T++) {
      expect(rows[T].m).toBeCloseTo(-0.1 * T, 12);
      expect(rows[T].M).toBeCloseTo(-0.1 * T, 12);
      expect(rows[T].PH).toBeCloseTo(0, 12);
      expect(rows[T].alarm).toBe(false);
    }
    const table: [number, number, number, number, boolean][] = [
      [11, 0.090909, -0.190909, 0.809091, false],
      [12, 0.166667, 0.542424, 1.542424, true],
      [13, 0.230769, 1.211655, 2.211655, true],
      [20, 0.5, 4.687714, 5.687714, true],
    ];
    for (const [T, mean, m, PH, alarm] of table) {
      expect(rows[T].mean).toBeCloseTo(mean, 6);
      expect(rows[T].m).toBeCloseTo(m, 6);
      expect(rows[T].M).toBeCloseTo(-1.0, 12);
      expect(rows[T].PH).toBeCloseTo(PH, 6);
      expect(rows[T].alarm).toBe(alarm);
    }
    const batch = pageHinkleyBatch(STEP, EXAMPLE);
    expect(batch.firstAlarm).toBe(11); // T = 12, 0-based index 11
    expect(batch.alarms).toEqual([11, 12, 13, 14, 15, 16, 17, 18, 19]);
  });

  it("the decrease-side statistic stays 0 on the worked example", () => {
    const r = pageHinkleyBatch(STEP, { ...EXAMPLE, direction: "both" });
    expect(Array.from(r.down).every((v) => v === 0)).toBe(true);
    expect(r.firstAlarm).toBe(11);
    const downOnly = pageHinkleyBatch(STEP, { ...EXAMPLE, direction: "down" });
    expect(downOnly.alarms).toEqual([]);
  });

  it("uses the running mean that includes x_t, not the degenerate current-mean form", () => {
    // section 4: with x̄_T in every term, m_T = -T*delta = -1.2 at T = 12; the running-mean form gives 0.542424.
    const ph = new PageHinkley(EXAMPLE);
    STEP.slice(0, 12).forEach((x) => ph.update(x));
    expect(ph.mean).toBeCloseTo(2 / 12, 12);
    expect(ph.sumUp).not.toBeCloseTo(-1.2, 3);
  });

  it("minInstances delays the alarm; reset restarts the statistics after a detection", () => {
    // From the section 4 table: PH_T > lambda = 1 for every T >= 12 (1.54 at 12, rising to 5.69 at 20), so
    // with minInstances 15 the first alarm is T = 15, index 14; with minInstances 30 the 20-point series
    // never reaches the minimum, so no alarm (hand-derived).
    expect(pageHinkleyBatch(STEP, { ...EXAMPLE, minInstances: 15 }).firstAlarm).toBe(14);
    expect(pageHinkleyBatch(STEP, { ...EXAMPLE, minInstances: 30 }).alarms).toEqual([]);
    // With reset: after the alarm at index 11 the detector restarts on a constant run of 1s
    // (x - x̄ = 0, so m falls by delta each step and PH stays 0): no second alarm (hand-derived).
    const r = pageHinkleyBatch(STEP, { ...EXAMPLE, resetOnAlarm: true });
    expect(r.alarms).toEqual([11]);
    expect(r.up[12]).toBe(0);
  });

  it("defaults are the general-purpose libraries' (river / scikit-multiflow, section 4)", () => {
    expect(PAGE_HINKLEY_DEFAULTS).toEqual({
      delta: 0.005,
      lambda: 50,
      alpha: 1 - 0.0001,
      minInstances: 30,
      direction: "both",
      resetOnAlarm: true,
    });
  });

  it("bad parameters are typed errors", () => {
    expect(() => new PageHinkley({ alpha: 0 })).toThrow(InputError);
    expect(() => new PageHinkley({ lambda: 0 })).toThrow(InputError);
    expect(() => new PageHinkley({ minInstances: 0 })).toThrow(InputError);
  });

  const params = fc.record({
    delta: fc.double({ min: 0, max: 1, noNaN: true }),
    lambda: fc.double({ min: 1e-6, max: 10, noNaN: true }),
    alpha: fc.double({ min: 0.5, max: 1, noNaN: true }),
    minInstances: fc.integer({ min: 1, max: 5 }),
    direction: fc.constantFrom("up" as const, "down" as const, "both" as const),
    resetOnAlarm: fc.boolean(),
  });

  it("property: a constant series never alarms", () => {
    fc.assert(
      fc.property(fc.double({ min: -1e6, max: 1e6, noNaN: true }), fc.integer({ min: 1, max: 200 }), params, (c, n, p) => {
        expect(pageHinkleyBatch(new Array(n).fill(c), p).alarms).toEqual([]);
      }),
    );
  });

  it("property: the downward statistic of -x equals the upward statistic of x", () => {
    fc.assert(
      fc.property(fc.array(fc.double({ min: -100, max: 100, noNaN: true }), { maxLength: 80 }), params, (xs, p) => {
        const a = pageHinkleyBatch(xs, { ...p, direction: "up" });
        const b = pageHinkleyBatch(xs.map((x) => -x), { ...p, direction: "down" });
        expect(Array.from(b.down)).toEqual(Array.from(a.up));
        expect(b.alarms).toEqual(a.alarms);
      }),
    );
  });
});
