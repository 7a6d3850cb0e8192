/**
 * The parametric weight-sensitivity method (src/audit/checks/sensitivity.ts) against the earlier
 * step-and-bisect search (sensitivity-bisection.ts) on every built-in variant and on random models,
 * and against a hand derivation on a model with an interval narrower than the bisection's step grid.
 */
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { prepareAudit } from "../../src/audit/context.js";
import { weightIntervals, type WeightInterval } from "../../src/audit/checks/sensitivity.js";
import { weightIntervalsBisection } from "../../src/audit/checks/sensitivity-bisection.js";
import { builtinScenarioNames, loadScenario } from "../../src/env/index.js";
import { ModelBuilder } from "../../src/model/builder.js";
import type { FiniteModel } from "../../src/model/types.js";
import { solveVariant } from "../../src/solve/compare.js";

/**
 * The bisection's resolution at an edge E found from w0: the bracket of the outward step that
 * crossed it (at most 2 |E - w0|, or scale / 8 for the first step) halved 10 times.
 */
function resolution(e: number, w0: number, scale: number): number {
  return Math.max((2 * Math.abs(e - w0)) / 1024, scale / 8 / 1024) + 1e-9 * scale;
}

function edges(r: WeightInterval): number[] {
  return r.okAtCurrent ? [r.lo!, r.hi!] : r.fixAt === null ? [] : [r.fixAt];
}

/** Same answer at w0 and the same edges within the bisection's resolution. */
function expectSame(p: WeightInterval, b: WeightInterval, scale: number): void {
  expect(p.feature).toBe(b.feature);
  expect(p.okAtCurrent).toBe(b.okAtCurrent);
  const ep = edges(p);
  const eb = edges(b);
  expect(ep.length).toBe(eb.length);
  ep.forEach((e, i) => {
    if (!Number.isFinite(eb[i])) expect(e).toBe(eb[i]);
    else expect(Math.abs(e - eb[i])).toBeLessThanOrEqual(resolution(eb[i], b.weight, scale));
  });
}

function scaleOf(weights: Record<string, number>, w0: number): number {
  const ws = Object.values(weights).map(Math.abs).filter((x) => x > 0);
  return w0 !== 0 ? Math.abs(w0) : ws.length ? Math.max(...ws) : 1;
}

describe("parametric weight intervals = bisection on the built-in scenarios", () => {
  for (const name of builtinScenarioNames()) {
    const model = loadScenario(name).model;
    for (const v of Object.keys(model.variants ?? {})) {
      it(`${name}/${v}`, () => {
        const variant = model.variants![v];
        const ctx = prepareAudit(model, variant);
        const p = weightIntervals(ctx);
        const b = weightIntervalsBisection(ctx);
        expect(p.length).toBe(b.length);
        p.forEach((row, i) => expectSame(row, b[i], scaleOf(variant.weights, row.weight)));
      }, 120_000);
    }
  }
});

/** A random model with two continuous features (f swept, g fixed) and an intent per outcome. */
function randomModel(nS: number, nA: number, rows: { t: number; u: number; f: number; g: number; i: number; split: boolean }[]): FiniteModel {
  const b = new ModelBuilder({ name: "rand", nStates: nS, actions: Array.from({ length: nA }, (_, a) => `a${a}`), features: ["f", "g"], gamma: 0.9, horizon: 50 });
  b.setTerminal(nS - 1);
  for (let s = 0; s < nS - 1; s++) {
    for (let a = 0; a < nA; a++) {
      const r = rows[s * nA + a];
      const t1 = r.t % nS;
      const t2 = r.u % nS;
      if (!r.split || t1 === t2) b.addOutcome(s, a, t1, 1, [r.f, r.g], r.i);
      else {
        b.addOutcome(s, a, t1, 0.6, [r.f, r.g], r.i);
        b.addOutcome(s, a, t2, 0.4, [r.g, r.f], -r.i);
      }
    }
  }
  b.setStart(0, 1);
  return b.build();
}

describe("parametric weight intervals on random models (fast-check)", () => {
  const row = fc.record({
    t: fc.nat(100),
    u: fc.nat(100),
    // Rounded to 1e-3 so that no two actions differ by a rounding-level amount (the bisection
    // compares exactly, the parametric method with a 1e-9 tie tolerance).
    f: fc.integer({ min: -1000, max: 1000 }).map((x) => x / 1000),
    g: fc.integer({ min: -1000, max: 1000 }).map((x) => x / 1000),
    i: fc.integer({ min: -2, max: 2 }),
    split: fc.boolean(),
  });
  const arb = fc
    .record({ nS: fc.integer({ min: 2, max: 6 }), nA: fc.integer({ min: 1, max: 3 }) })
    .chain(({ nS, nA }) => fc.record({ nS: fc.constant(nS), nA: fc.constant(nA), rows: fc.array(row, { minLength: nS * nA, maxLength: nS * nA }), w: fc.double({ min: 0.1, max: 2, noNaN: true }) }));

  it("edges agree with the bisection within its resolution, or the bisection stepped over a narrow interval (checked by an independent solve)", () => {
    fc.assert(
      fc.property(arb, ({ nS, nA, rows, w }) => {
        const m = randomModel(nS, nA, rows);
        const variant = { name: "v", weights: { f: w, g: 1 } };
        const ctx = prepareAudit(m, variant);
        const [p] = weightIntervals(ctx, ["f"]);
        const [b] = weightIntervalsBisection(ctx, ["f"]);
        // Independent check of the parametric answer: a value-iteration solve at the current weight
        // and just inside every edge agrees with its ok / not-ok claim (regret ~ 0 <=> intent-optimal).
        const okBySolve = (x: number): boolean => {
          const r = solveVariant(m, { name: "x", weights: { f: x, g: 1 } });
          return r.regret < 1e-6 * (1 + Math.abs(r.intentOptimal.intent));
        };
        expect(p.okAtCurrent).toBe(okBySolve(w));
        if (p.okAtCurrent) {
          for (const e of [p.lo!, p.hi!]) if (Number.isFinite(e) && Math.abs(e - w) > 1e-6) expect(okBySolve(w + (e - w) * (1 - 1e-4))).toBe(true);
        } else if (p.fixAt !== null) {
          // Just past fixAt (away from w) the policy is intent-optimal, unless that interval is a point.
          const x = p.fixAt + Math.sign(p.fixAt - w) * 1e-7 * (1 + Math.abs(p.fixAt));
          expect(okBySolve(x)).toBe(true);
        }
        const scale = w;
        if (p.okAtCurrent === b.okAtCurrent && edges(p).length === edges(b).length) {
          const ep = edges(p);
          const eb = edges(b);
          ep.forEach((e, i) => {
            if (Number.isFinite(eb[i]) && Number.isFinite(e) && Math.abs(e - eb[i]) > resolution(eb[i], w, scale)) {
              // The bisection's edge is further out: the parametric one must be nearer to w.
              expect(Math.abs(e - w)).toBeLessThan(Math.abs(eb[i] - w));
            }
          });
        }
      }),
      { numRuns: 60 },
    );
  }, 120_000);
});

/**
 * A narrow interval. One decision, then the episode ends (gamma irrelevant: one reward). Features
 * f (swept, weight w) and g (weight 1); outcome values (f, g) and intent per action:
 *   a0: (1, 0)         designer w            intent 0
 *   a1: (0, 1.005)     designer 1.005        intent 0
 *   a2: (0.5, 0.505)   designer 0.5 w + 0.505 intent 1
 * Hand derivation: a2 beats a0 iff 0.5 w + 0.505 >= w iff w <= 1.01; a2 beats a1 iff 0.5 w + 0.505 >=
 * 1.005 iff w >= 1.00. So the designer optimum is intent-optimal exactly for w in [1.00, 1.01]
 * (at both ends a tie with a lower-index action, which the greedy tie rule prefers: the open
 * interval (1.00, 1.01) strictly, edges 1.00 and 1.01 either way).
 */
function narrowModel(): FiniteModel {
  const b = new ModelBuilder({ name: "narrow", nStates: 2, actions: ["a0", "a1", "a2"], features: ["f", "g"], gamma: 0.9, horizon: 2 });
  b.setTerminal(1);
  b.addOutcome(0, 0, 1, 1, [1, 0], 0);
  b.addOutcome(0, 1, 1, 1, [0, 1.005], 0);
  b.addOutcome(0, 2, 1, 1, [0.5, 0.505], 1);
  b.setStart(0, 1);
  return b.build();
}

describe("a narrow interval (hand derivation in narrowModel's comment)", () => {
  it("from w = 3 the bisection's steps (2.625, 2.25, 1.5, 0, -3, ...) miss [1.00, 1.01]; the parametric walk finds fixAt = 1.01", () => {
    const m = narrowModel();
    const ctx = prepareAudit(m, { name: "v", weights: { f: 3, g: 1 } });
    const [b] = weightIntervalsBisection(ctx, ["f"]);
    const [p] = weightIntervals(ctx, ["f"]);
    expect(b.okAtCurrent).toBe(false);
    expect(b.fixAt).toBeNull();
    expect(p.okAtCurrent).toBe(false);
    expect(p.fixAt).toBeCloseTo(1.01, 9);
    expect(p.distance).toBeCloseTo(3 - 1.01, 9);
  });

  it("from w = 1.005 both find [1.00, 1.01]; the parametric edges are exact", () => {
    const m = narrowModel();
    const ctx = prepareAudit(m, { name: "v", weights: { f: 1.005, g: 1 } });
    const [p] = weightIntervals(ctx, ["f"]);
    const [b] = weightIntervalsBisection(ctx, ["f"]);
    expect(p.okAtCurrent).toBe(true);
    expect(p.lo).toBeCloseTo(1.0, 9);
    expect(p.hi).toBeCloseTo(1.01, 9);
    expectSame(p, b, 1.005);
  });

  it("from w = 0 (not ok) the nearest edge upward is 1.00", () => {
    const m = narrowModel();
    const ctx = prepareAudit(m, { name: "v", weights: { f: 0, g: 1 } });
    const [p] = weightIntervals(ctx, ["f"]);
    expect(p.okAtCurrent).toBe(false);
    expect(p.fixAt).toBeCloseTo(1.0, 9);
  });
});
