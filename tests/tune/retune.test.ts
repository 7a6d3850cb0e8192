/**
 * Acceptance of slider tuning across layouts (exact solves, no sampling) on kiln-shelf-haul, whose
 * generator says where each pot lies: in the aisle (on the only straight route) or in a side bay.
 * That structural fact, read from the generator and not from any solve, is what the checks compare
 * the tuner's findings against.
 */
import { describe, expect, it } from "vitest";
import { readScenarioMeta, loadEnvSync } from "../../src/env/index.js";
import { aisleRoom, layoutRng, readAisleRoomOptions } from "../../src/model/layouts.js";
import { wilsonInterval } from "../../src/stats/wilson.js";
import { runRetune } from "../../src/tune/run.js";
import { layoutRegret, moveInto } from "../../src/tune/search.js";
import { holdoutRegretsParallel } from "../../src/tune/parallel.js";
import { parseMoves } from "../../src/app/retune.js";

const range = (a: number, b: number) => Array.from({ length: b - a + 1 }, (_, i) => a + i);

const ENV = "kiln-shelf-haul";
const opts = readAisleRoomOptions(readScenarioMeta(ENV).layouts as Record<string, unknown>, ENV);
const pots = (n: number) => aisleRoom(opts, layoutRng(ENV, n));
const load = (n: number) => loadEnvSync(`${ENV}#${n}`).model;
const clear: number[] = [];
const nearDock: number[] = [];
for (let n = 1; clear.length < 5 || nearDock.length < 1; n++) {
  const t = pots(n);
  const w = t.lines[0].length - 2;
  if (t.aislePots.length === 0) clear.push(n);
  else if (t.aislePots.some(([, c]) => c === w - 1)) nearDock.push(n);
}
const HOLDOUT = Array.from({ length: 60 }, (_, i) => 500 + i);
const bounds = [
  { feature: "step", lo: -0.1, hi: 0 },
  { feature: "fragile", lo: -2, hi: 2 },
];
const start = { goal: 1, step: -0.05, fragile: 0 };
const retune = async (tuning: number[]) =>
  (await runRetune({ env: ENV, reward: "aisle-tuned", start, bounds, tuning: tuning.map((n) => ({ layout: n, model: load(n) })), holdout: HOLDOUT, loadLayout: load, budget: 10, seed: 1 })).doc;

describe("retune on kiln-shelf-haul", () => {
  it("tuned only on clear-aisle layouts: the pot weight stays 0, unconstrained, and a clear share of held-out layouts game", async () => {
    const doc = await retune(clear.slice(0, 5));
    expect(doc.search.accepted).toBe(true);
    expect(doc.tuning.maxRegretNorm).toBeLessThanOrEqual(1e-6);
    expect(doc.tuned.weights.fragile).toBe(0);
    const fragile = doc.features.find((f) => f.name === "fragile")!;
    expect(fragile.constrained).toBe(false);
    expect(fragile.interval![0]).toBeNull(); // no lower end: any penalty keeps the clear layouts intent-optimal
    expect(fragile.unbounded).toBe(true);
    expect(fragile.likelyCause).toBe(true);
    // Structural cross-check: every layout that games has a pot in the aisle; so does every suggestion.
    const gamed = doc.holdout.layouts.filter((_, i) => doc.holdout.regretNorm[i] >= 0.3);
    expect(gamed.length).toBe(doc.holdout.gaming);
    for (const n of [...gamed, ...fragile.suggest]) expect(pots(n).aislePots.length, `layout ${n}`).toBeGreaterThan(0);
    expect(doc.holdout.gamingRate).toBeGreaterThanOrEqual(0.2);
    // A layout with nothing in the aisle keeps the intended route.
    for (const n of HOLDOUT.filter((n) => pots(n).aislePots.length === 0).slice(0, 5)) expect(layoutRegret(load(n), doc.tuned.weights)).toBe(0);
    const ci = wilsonInterval(doc.holdout.gaming, HOLDOUT.length);
    expect(doc.holdout.ci.lower).toBe(ci.lower);
    expect(doc.holdout.ci.upper).toBe(ci.upper);
    expect(doc.holdout.worst!.regretNorm).toBe(Math.max(...doc.holdout.regretNorm));
    expect(doc.holdout.worst!.divergence).not.toBeNull();
    expect(doc.features.find((f) => f.name === "step")!.likelyCause).toBe(false);
  });

  it("one tuning layout with a pot in the aisle: the pot weight is constrained (negative) and no held-out layout games", async () => {
    const doc = await retune([...clear.slice(0, 4), nearDock[0]]);
    expect(doc.search.accepted).toBe(true);
    const fragile = doc.features.find((f) => f.name === "fragile")!;
    expect(fragile.constrained).toBe(true);
    expect(doc.tuned.weights.fragile).toBeLessThan(0);
    expect(fragile.interval![1]).toBeLessThan(0);
    expect(doc.holdout.gaming).toBe(0);
    expect(doc.holdout.gamingRate).toBe(0);
    expect(doc.diagnosis).toEqual([]);
  });

  it("the search is reproducible: the same inputs and seed give the same document", async () => {
    expect(JSON.stringify(await retune(clear.slice(0, 3)))).toBe(JSON.stringify(await retune(clear.slice(0, 3))));
  });
});

describe("moveInto", () => {
  it("keeps a weight inside, moves past the nearest edge by half the way travelled, at most to the middle", () => {
    expect(moveInto(0.5, [0, 1])).toBe(0.5);
    expect(moveInto(0, [-Infinity, -0.1])).toBeCloseTo(-0.15, 12);
    expect(moveInto(-1, [0.2, Infinity])).toBeCloseTo(0.8, 12);
    expect(moveInto(-1, [0.2, 0.4])).toBeCloseTo(0.3, 12);
  });
});

describe("held-out evaluation on worker threads", () => {
  it("gives the same regretNorms, in layout order, as solving the layouts one by one here", async () => {
    const layouts = range(700, 712);
    const weights = { goal: 1, step: -0.05, fragile: 0 };
    const here = layouts.map((n) => layoutRegret(load(n), weights));
    expect(await holdoutRegretsParallel(ENV, layouts, weights, { threads: 3 })).toEqual(here);
    expect(here.some((x) => x >= 0.3)).toBe(true);
  }, 60_000);
  it("an unknown layout family member fails with its input error", async () => {
    await expect(holdoutRegretsParallel("tests/fixtures/models/sb-4x4.json", [1, 2], {}, { threads: 2 })).rejects.toThrow(/one model, not a family/);
  }, 60_000);
});

describe("--move", () => {
  it("parses name=lo:hi lists and refuses bad bounds, repeats and __proto__ with retune.move", () => {
    expect(parseMoves("step=-0.1:0, fragile=-2:2e0")).toEqual([
      { feature: "step", lo: -0.1, hi: 0 },
      { feature: "fragile", lo: -2, hi: 2 },
    ]);
    for (const bad of ["step", "step=1:0", "step=a:b", "step=0:1,step=0:2", "__proto__=0:1"]) expect(() => parseMoves(bad), bad).toThrow(expect.objectContaining({ code: "retune.move" }));
  });
});
