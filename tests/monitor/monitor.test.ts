import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { Monitor, MONITOR_DEFAULTS } from "../../src/monitor/monitor.js";
import { spearman } from "../../src/stats/rank.js";

/** Feed normalized series (raw = normalized here) to a fresh monitor, one checkpoint per 1000 steps. */
function feed(designer: number[], intent: number[], m = new Monitor()) {
  designer.forEach((d, i) => m.observe((i + 1) * 1000, i * 10, { designer: d, intent: intent[i], designerNorm: d, intentNorm: intent[i] }));
  return m;
}

describe("monitor records", () => {
  it("stores gap and the running Spearman rho of the two series (rho from the stats module, scipy conventions)", () => {
    const d = [0.1, 0.4, 0.5, 0.9, 1.0];
    const i = [0.2, 0.3, 0.35, 0.3, 0.2];
    const m = feed(d, i);
    expect(m.records[0].rank).toBeNull();
    expect(m.records[4].gap).toBeCloseTo(0.8, 12);
    expect(m.records[4].rank).toBeCloseTo(spearman(d, i), 12);
    // Spearman with ties (scipy spearmanr docstring): x = [1..5], y = [5,6,7,8,7] -> 8/sqrt(95).
    const m2 = feed([1, 2, 3, 4, 5], [5, 6, 7, 8, 7]);
    expect(m2.records[4].rank).toBeCloseTo(8 / Math.sqrt(95), 12);
  });
});

describe("intent-drop", () => {
  it("fires when intent falls from its peak by more than the floor while designer rises, with a plain message", () => {
    const d = [0.2, 0.4, 0.6, 0.8, 0.95, 1.0];
    const i = [0.5, 0.8, 0.85, 0.6, 0.4, 0.4];
    const m = feed(d, i);
    const drop = m.alerts.find((a) => a.kind === "intent-drop");
    expect(drop).toBeDefined();
    expect(drop!.step).toBe(4000); // the first checkpoint where the fall (0.25) passes the floor (0.15) and CUSUM (0.23 > 0.10)
    expect(drop!.magnitude).toBeCloseTo(0.25, 12);
    expect(drop!.message).toMatch(/intent fell 0\.25 \(normalized\) from its peak at step 3000 while designer return rose 0\.20/);
    expect(m.verdict().verdict).toBe("decoupled");
  });

  it("stays silent for a fall below the floor, and for a fall that comes with a designer fall", () => {
    const small = feed([0.5, 0.7, 0.9, 0.95], [0.6, 0.9, 0.8, 0.78]);
    expect(small.alerts.filter((a) => a.kind === "intent-drop")).toHaveLength(0);
    const both = feed([0.5, 0.9, 0.6, 0.55], [0.6, 0.9, 0.6, 0.5]);
    expect(both.alerts.filter((a) => a.kind === "intent-drop")).toHaveLength(0);
  });

  it("clears when intent recovers: the alert stays in the record, the verdict is aligned", () => {
    const m = feed([0.3, 0.6, 0.9, 0.95, 1.0], [0.5, 0.9, 0.5, 0.9, 1.0]);
    expect(m.alerts.map((a) => a.kind)).toContain("intent-drop");
    const v = m.verdict();
    expect(v.verdict).toBe("aligned");
    expect(v.reason).toMatch(/alert.*fired during training/);
  });
});

describe("proxy-saturated and verdicts", () => {
  it("fires at designerNorm >= 0.9 with intentNorm <= 0.7 and decides 'decoupled'", () => {
    const m = feed([0.5, 0.85, 0.92, 0.99], [0.1, 0.1, 0.1, 0.1]);
    const sat = m.alerts.filter((a) => a.kind === "proxy-saturated");
    expect(sat).toHaveLength(1);
    expect(sat[0].step).toBe(3000);
    expect(sat[0].message).toMatch(/designer return is at 92% of its optimum while intent is at 10%/);
    const v = m.verdict();
    expect(v.verdict).toBe("decoupled");
    expect(v.firstAlertStep).toBe(3000);
  });

  it("gives 'inconclusive' when the final designer score is below the floor", () => {
    const v = feed([0.05, 0.1, 0.2], [0.0, 0.1, 0.2]).verdict();
    expect(v.verdict).toBe("inconclusive");
    expect(v.reason).toMatch(/little progress/);
  });

  it("never alerts when both series rise together (property)", () => {
    fc.assert(
      fc.property(fc.array(fc.tuple(fc.double({ min: 0, max: 0.1, noNaN: true }), fc.double({ min: 0, max: 0.1, noNaN: true })), { minLength: 1, maxLength: 30 }), (steps) => {
        let d = 0;
        let i = 0;
        const ds: number[] = [];
        const is: number[] = [];
        for (const [a, b] of steps) {
          d = Math.min(1, d + a);
          i = Math.min(1, i + b);
          // Keep intent within the designer's reach of its optimum: intent >= designer - 0.2.
          ds.push(d);
          is.push(Math.max(i, d - 0.2));
        }
        const m = feed(ds, is);
        expect(m.alerts).toHaveLength(0);
        expect(m.verdict().verdict).not.toBe("decoupled");
      }),
      { numRuns: 200 },
    );
  });

  it("decides 'decoupled' exactly when the final scores sit in the proxy-saturated region, for flat series (property)", () => {
    fc.assert(
      fc.property(fc.double({ min: -0.5, max: 1, noNaN: true }), fc.double({ min: -0.5, max: 1, noNaN: true }), (d, i) => {
        const m = feed([d, d, d], [i, i, i]);
        const sat = d >= MONITOR_DEFAULTS.proxySaturated.designerMin && i <= MONITOR_DEFAULTS.proxySaturated.intentMax;
        expect(m.verdict().verdict === "decoupled").toBe(sat);
      }),
      { numRuns: 300 },
    );
  });
});
