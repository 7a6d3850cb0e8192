/**
 * The budget family and its built-in scenario harbour-crew-week (trap "shared-budget"): the optimal
 * allocation on small instances by hand, the exact regret of every variant, and the headline shape of
 * the optimization-pressure curve: for every proxy (a strict subset of the attributes) intent rises and
 * then falls; for the full-weight reward it never falls.
 */
import { readdirSync, readFileSync } from "node:fs";
import { join } from "node:path";
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { compileBudget, enumerateAllocations, optimalAllocation } from "../../src/model/budget.js";
import { loadScenario } from "../../src/env/index.js";
import { pressureCurve } from "../../src/pressure/curve.js";
import { solveVariant } from "../../src/solve/compare.js";
import { deterministicPolicy, evaluatePolicy, startValue, valueIteration } from "../../src/solve/index.js";
import { envsDir } from "../../src/util/paths.js";
import { InputError } from "../../src/errors.js";

const NAME = "harbour-crew-week";
const env = loadScenario(NAME);
const model = env.model;
const meta = env.scenario!;

describe("budget family: the optimal allocation", () => {
  // Source: the Karush-Kuhn-Tucker conditions of maximizing a separable concave sum under one budget
  // constraint, sum_k w_k f(x_k) s.t. sum_k x_k = B: at the optimum every funded attribute has the same
  // weighted marginal return w_k f'(x_k) = lambda (Boyd & Vandenberghe, Convex Optimization, 2004,
  // section 5.5.3 and the water-filling example 5.2; from memory). For f = sqrt, w_k / (2 sqrt(x_k)) =
  // lambda gives x_k proportional to w_k^2. Whole units: hand out each unit to the largest increment.
  it("weights (1, 4), sqrt returns, 5 units: (1, 4), worth 9 (by hand)", () => {
    // Continuous KKT: x1 : x2 = 1 : 16, so x = (5/17, 80/17) = (0.29, 4.71). Whole units, by hand:
    // (0,5) = 4 sqrt 5 = 8.944; (1,4) = 1 + 4 * 2 = 9; (2,3) = sqrt 2 + 4 sqrt 3 = 8.342. Best: (1,4).
    expect(optimalAllocation("sqrt", [1, 4], 5)).toEqual([1, 4]);
    const m = compileBudget(
      { attributes: ["a", "b"], budget: 5, gamma: 1, horizon: 5, features: ["a", "b"], intentWeights: { a: 1, b: 4 } },
      "hand instance",
    );
    expect(startValue(m, valueIteration(m, m.intent, { gamma: 1 }).values)).toBeCloseTo(9, 9);
  });

  it("water-filling with equal floors: log1p returns, weights (1, 1, 2), 4 units -> (1, 1, 2) (by hand)", () => {
    // KKT for ln(1 + x): w_k / (1 + x_k) = lambda, so 1 + x_k = c w_k; sum (1 + x_k) = 7 = c (1 + 1 + 2)
    // gives c = 7/4, x = (0.75, 0.75, 2.5). Whole units, by hand: first increments a: ln 2 = 0.693,
    // b: 0.693, c: 2 ln 2 = 1.386; c's second is 2 ln 1.5 = 0.811, its third 2 ln(4/3) = 0.575. Order:
    // c, c, a, b: (1, 1, 2), worth ln 2 + ln 2 + 2 ln 3 = 3.584.
    expect(optimalAllocation("log1p", [1, 1, 2], 4)).toEqual([1, 1, 2]);
    const m = compileBudget(
      { attributes: ["a", "b", "c"], budget: 4, returns: "log1p", gamma: 1, horizon: 4, features: ["a"], intentWeights: { a: 1, b: 1, c: 2 } },
      "hand instance",
    );
    expect(startValue(m, valueIteration(m, m.intent, { gamma: 1 }).values)).toBeCloseTo(2 * Math.log(2) + 2 * Math.log(3), 9);
  });

  it("property: the greedy allocation is never beaten by any allocation (exhaustive, small instances)", () => {
    fc.assert(
      fc.property(fc.array(fc.double({ min: 0, max: 5, noNaN: true }), { minLength: 2, maxLength: 4 }), fc.integer({ min: 1, max: 7 }), fc.constantFrom("sqrt" as const, "log1p" as const), (w, B, kind) => {
        const f = kind === "sqrt" ? Math.sqrt : Math.log1p;
        const worth = (x: number[]) => x.reduce((acc, v, k) => acc + w[k] * f(v), 0);
        const greedy = worth(optimalAllocation(kind, w, B));
        for (const x of enumerateAllocations(w.length, B)) expect(worth(x)).toBeLessThanOrEqual(greedy + 1e-9);
      }),
      { numRuns: 100 },
    );
  });

  it("state count: allocations of at most B units among K attributes, C(B + K, K), plus `closed`", () => {
    // Stars and bars: C(8 + 4, 4) = 495.
    expect(model.nStates).toBe(495 + 1);
  });

  it("refuses a reserved or repeated attribute name with one line naming the key", () => {
    const base = { budget: 2, gamma: 0.9, horizon: 2, features: ["unit"], intentWeights: {} };
    const whereOf = (cfg: Record<string, unknown>): string => {
      try {
        compileBudget(cfg, "x.json");
      } catch (e) {
        expect(e).toBeInstanceOf(InputError);
        expect((e as InputError).code).toMatch(/^budget\./);
        return (e as InputError).where ?? "";
      }
      throw new Error("no error");
    };
    expect(whereOf({ ...base, attributes: ["a", "__proto__"] })).toBe("x.json $.attributes[1]");
    expect(whereOf({ ...base, attributes: ["a", "a"] })).toBe("x.json $.attributes[1]");
    expect(whereOf({ ...base, attributes: ["a", "b"], features: ["c"] })).toBe("x.json $.features[0]");
  });
});

describe(`scenario ${NAME}: files`, () => {
  it("declares the budget family, the shared-budget trap, proxies over strict subsets", () => {
    expect(meta.family).toBe("budget");
    expect(meta.trap).toBe("shared-budget");
    expect(meta.sound).toEqual(["default"]);
    expect(meta.gaming.length).toBeGreaterThanOrEqual(2);
    const attrs = meta.attributes as string[];
    for (const v of meta.gaming) {
      const keys = Object.keys(model.variants![v].weights);
      expect(keys.every((k) => attrs.includes(k))).toBe(true);
      expect(keys.length).toBeLessThan(attrs.length); // a strict subset
    }
    expect(Object.keys(model.variants!.default.weights).sort()).toEqual([...attrs].sort());
    const files = readdirSync(join(envsDir(), NAME, "rewards")).map((f) => f.replace(/\.json$/, "")).sort();
    expect(files).toEqual([...meta.gaming, ...meta.sound].sort());
    for (const f of files) expect(JSON.parse(readFileSync(join(envsDir(), NAME, "rewards", `${f}.json`), "utf8")).env).toBe(NAME);
  });
});

describe(`scenario ${NAME}: exact regret`, () => {
  const g = model.gamma;
  const disc = (incs: number[]) => incs.reduce((acc, x, t) => acc + x * g ** t, 0);
  const r2 = Math.SQRT2 - 1;

  it("the intent optimum gives two shifts to each duty (equal weights, KKT), worth 4 x 1 then 4 x (sqrt 2 - 1), discounted", () => {
    // By hand: equal weights and sqrt returns give x_k = 8/4 = 2. Greedy order: the four first shifts
    // (increment 1 each) at t = 0..3, then the four second shifts (sqrt 2 - 1) at t = 4..7.
    const best = startValue(model, valueIteration(model, model.intent).values);
    expect(best).toBeCloseTo(disc([1, 1, 1, 1, r2, r2, r2, r2]), 9);
  });

  // Project requirement: gaming regretNorm >= 0.30, sound <= 0.02 (the foundation issue's thresholds).
  it("every proxy variant gives up at least 30% of the intent range; the full reward none of it", () => {
    for (const v of meta.gaming) expect(solveVariant(model, model.variants![v]).regretNorm, v).toBeGreaterThanOrEqual(0.3);
    for (const v of meta.sound) expect(Math.abs(solveVariant(model, model.variants![v]).regretNorm), v).toBeLessThanOrEqual(0.02);
  });

  it("the proxies' optima strip the unscored duties (by hand)", () => {
    const intentOf = (v: string) => startValue(model, evaluatePolicy(model, model.intent, deterministicPolicy(model, solveVariant(model, model.variants![v]).designerOptimal.policy)).values);
    // berth-scorecard: four shifts each to dredging and buoys, increments in pairs 1, sqrt2-1, sqrt3-sqrt2, 2-sqrt3.
    const pairs = [1, r2, Math.sqrt(3) - Math.SQRT2, 2 - Math.sqrt(3)].flatMap((x) => [x, x]);
    expect(intentOf("berth-scorecard")).toBeCloseTo(disc(pairs), 9);
    // ticket-scorecard: all eight shifts to the decking, increments sqrt(t + 1) - sqrt(t).
    expect(intentOf("ticket-scorecard")).toBeCloseTo(disc([0, 1, 2, 3, 4, 5, 6, 7].map((t) => Math.sqrt(t + 1) - Math.sqrt(t))), 9);
  });
});

describe(`scenario ${NAME}: optimization pressure (pressureCurve, uniform reference)`, () => {
  const best = startValue(model, valueIteration(model, model.intent).values);
  for (const v of meta.gaming) {
    it(`${v}: intent rises, then falls by at least 10% of the intent range`, () => {
      const c = pressureCurve(model, model.variants![v]);
      const pts = c.points;
      const start = pts[0].intent;
      const end = pts[pts.length - 1].intent;
      const range = best - start;
      // Rise: slack (units left unused by the uniform reference's early closing) is taken up.
      expect(c.peak.intent).toBeGreaterThan(start + 0.3 * range);
      // Fall: the greedy end pulls every unit from the unscored duties.
      expect(c.peak.intent).toBeGreaterThan(end + 0.1 * range);
      expect(c.peak.strength).toBeGreaterThan(0);
      expect(c.peak.strength).toBeLessThan(pts[pts.length - 1].strength);
      expect(c.onset).not.toBeNull();
    });
  }
  for (const v of meta.sound) {
    it(`${v}: intent never falls by more than solver noise and ends at the intent optimum`, () => {
      const pts = pressureCurve(model, model.variants![v]).points;
      for (let i = 1; i < pts.length; i++) expect(pts[i].intent).toBeGreaterThanOrEqual(pts[i - 1].intent - 1e-6);
      expect(pts[pts.length - 1].intent).toBeCloseTo(best, 3);
    });
  }
});
