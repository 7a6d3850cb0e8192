/**
 * Pressure curves: on gaming variants intent peaks before the greedy end and falls while designer
 * return rises (a Goodhart curve); on sound variants there is no onset and the greedy end reaches the
 * intent-optimal value. Also: the onset rule on hand-made sequences, designer return never decreasing
 * with strength, and a saved reference policy at strength 0 scoring what exact policy evaluation gives.
 * (Soft value iteration itself is tested in tests/solve/soft.test.ts.)
 */
import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { defaultBetas, onsetIndex, peakIndex, pressureCurve, type PressurePoint } from "../../src/pressure/curve.js";
import { parseReferencePolicy } from "../../src/pressure/reference.js";
import { loadScenario, readScenarioMeta } from "../../src/env/index.js";
import { designerReward } from "../../src/model/reward.js";
import { evaluatePolicy } from "../../src/solve/evaluation.js";
import { startValue } from "../../src/solve/policy.js";
import { valueIteration } from "../../src/solve/value-iteration.js";

const GRIDS = ["seed-vault-courier", "fresh-coat-tug", "quench-hall-run"];

function betasFor(name: string, variant: string): number[] | undefined {
  if (name !== "assay-carousel") return undefined;
  // The 480-state track: every third default strength keeps the test fast.
  const m = loadScenario(name).model;
  return defaultBetas(m, designerReward(m, m.variants![variant]), m.gamma).filter((_, i) => i % 3 === 0 || i === 24);
}

describe("Goodhart curves on the built-in scenarios", () => {
  const cases: [string, string, boolean][] = [];
  for (const name of GRIDS) {
    const meta = readScenarioMeta(name);
    for (const v of meta.gaming) cases.push([name, v, true]);
    for (const v of meta.sound) cases.push([name, v, false]);
  }
  cases.push(["assay-carousel", "belt-travel", true], ["assay-carousel", "default", false]);
  for (const [name, v, gaming] of cases) {
    it(`${name}/${v}: ${gaming ? "intent peaks before the greedy end, onset found" : "no onset, the greedy end is intent-optimal"}`, () => {
      const m = loadScenario(name).model;
      const c = pressureCurve(m, m.variants![v], { betas: betasFor(name, v) });
      const pts = c.points;
      expect(pts[0].strength).toBe(0);
      expect(pts[0].kl).toBeCloseTo(0, 12);
      // Designer return of the soft optimum does not decrease with strength (up to solver tolerance).
      for (let i = 1; i < pts.length; i++) expect(pts[i].designer).toBeGreaterThanOrEqual(pts[i - 1].designer - 1e-6);
      const end = pts[pts.length - 1];
      const best = startValue(m, valueIteration(m, m.intent).values);
      const range = best - pts[0].intent; // strength 0 = the uniform reference
      // The scale: the near-greedy end reaches the designer optimum; strength 0 is the uniform reference.
      expect(end.designer).toBeCloseTo(c.scale.designer.optimum, 3);
      expect(pts[0].intent).toBeCloseTo(c.scale.intent.random, 8);
      expect(c.scale.intent.optimum).toBeCloseTo(best, 6);
      if (gaming) {
        expect(c.peak.strength).toBeLessThan(end.strength);
        if (name === "fresh-coat-tug") {
          // What is true here: leaving random behaviour stops most trampling, so intent climbs to about the
          // designer optimum's level, dips once and ends barely below its peak (less than the 1% tolerance:
          // no onset); the whole curve stays far from the intent optimum (the omitted feature is never paid
          // for at any strength).
          expect(c.peak.intent - end.intent).toBeLessThan(0.01 * range);
          expect(Math.max(...pts.map((p) => p.intent))).toBeLessThan(best - 0.5 * range);
          expect(c.onset).toBeNull();
        } else {
          expect(c.peak.intent).toBeGreaterThan(end.intent + 0.01 * range);
          expect(c.onset).not.toBeNull();
          // Over-optimization sets in at or after the peak, never before it.
          expect(c.onset!).toBeGreaterThanOrEqual(c.peak.strength);
        }
      } else {
        expect(c.onset).toBeNull();
        expect(end.intent).toBeCloseTo(best, 3);
      }
    });
  }
});

describe("onset rule", () => {
  const pts = (xs: [number, number][]): PressurePoint[] => xs.map(([designer, intent], i) => ({ strength: i, kl: i, designer, intent }));
  it("is the first point from which intent falls by more than the tolerance while designer rises", () => {
    expect(onsetIndex(pts([[0, 0.1], [1, 0.3], [2, 0.5], [3, 0.2]]), 0.01)).toBe(2);
    // A dip before a later, higher peak is not an onset (intent ends at its best).
    expect(onsetIndex(pts([[0, 0.1], [1, 0.4], [2, 0.3], [3, 0.5]]), 0.01)).toBe(-1);
    // Intent first falls as the policy leaves the reference, then climbs to its peak and falls: the onset is the peak.
    expect(onsetIndex(pts([[0, 0.3], [1, 0.1], [2, 0.6], [3, 0.4]]), 0.01)).toBe(2);
    expect(onsetIndex(pts([[0, 0.1], [1, 0.4], [2, 0.395], [3, 0.5]]), 0.01)).toBe(-1);
    // No onset when designer return does not rise with the fall.
    expect(onsetIndex(pts([[0, 0.5], [0, 0.1]]), 0.01)).toBe(-1);
    expect(onsetIndex(pts([[0, 0.1], [1, 0.2], [2, 0.3]]), 0.01)).toBe(-1);
  });
});

describe("onset rule, property", () => {
  it("an onset is never before the first point of maximum intent, and intent falls after it by more than the tolerance", () => {
    fc.assert(
      fc.property(fc.array(fc.tuple(fc.double({ min: 0, max: 1, noNaN: true }), fc.double({ min: -1, max: 1, noNaN: true })), { minLength: 1, maxLength: 12 }), fc.double({ min: 0, max: 0.2, noNaN: true }), (xs, tol) => {
        // Designer return of a soft optimum grows with strength: sort it so the sequences look like curves.
        const ds = xs.map(([d]) => d).sort((a, b) => a - b);
        const points = xs.map(([, intent], i) => ({ strength: i, kl: i, designer: ds[i], intent }));
        const on = onsetIndex(points, tol);
        const peak = peakIndex(points);
        if (on < 0) return;
        expect(on).toBeGreaterThanOrEqual(peak);
        expect(points.slice(on + 1).some((p) => p.intent < points[on].intent - tol && p.designer > points[on].designer)).toBe(true);
      }),
    );
  });
});

describe("reference policies", () => {
  it("a saved deterministic policy is smoothed; strength 0 scores the reference itself", () => {
    const m = loadScenario("fresh-coat-tug").model;
    const v = m.variants!.fast;
    const greedy = valueIteration(m, m.intent).policy;
    const ref = parseReferencePolicy(m, { policy: Array.from(greedy, (a) => (a < 0 ? null : m.actions[a])) }, "test");
    const c = pressureCurve(m, v, { reference: ref, betas: [0, 1e4] });
    const rd = designerReward(m, v);
    expect(c.points[0].designer).toBeCloseTo(startValue(m, evaluatePolicy(m, rd, ref, { tol: 1e-12 }).values), 8);
    expect(c.points[0].intent).toBeCloseTo(startValue(m, evaluatePolicy(m, m.intent, ref, { tol: 1e-12 }).values), 8);
    // Rows: 0.9 on the saved action plus 0.1 spread uniformly.
    const s = m.start.findIndex((p) => p > 0);
    const row = Array.from(ref.subarray(s * m.nActions, (s + 1) * m.nActions));
    expect(Math.max(...row)).toBeCloseTo(0.9 + 0.1 / m.nActions, 12);
    expect(() => parseReferencePolicy(m, { policy: [1, 2] }, "bad.json")).toThrow(/expected one per state/);
  });
});
