/**
 * The built-in track scenario assay-carousel (trap "speed-proxy"): its files, the exact gap between
 * the designer-optimal and the intent-optimal policy per variant, the shaping identity, and the
 * hand-computable rates behind the trap (belt travel pays for speed; a probe reads only at creep speed).
 */
import { readdirSync, readFileSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { loadScenario } from "../../src/env/index.js";
import { compileTrack, type TrackConfig } from "../../src/model/track.js";
import { designerReward } from "../../src/model/reward.js";
import { learnerView, viewEnv } from "../../src/model/learner-view.js";
import { solveVariant } from "../../src/solve/compare.js";
import { evaluatePolicy } from "../../src/solve/evaluation.js";
import { deterministicPolicy, startValue } from "../../src/solve/policy.js";
import { valueIteration } from "../../src/solve/value-iteration.js";
import { createRng } from "../../src/rng/rng.js";
import { envsDir } from "../../src/util/paths.js";
import { trainQLearning } from "../../policies/qlearning.js";
import { cycleAverage } from "../helpers/cycle-average.js";

const NAME = "assay-carousel";
const dir = join(envsDir(), NAME);
const env = loadScenario(NAME);
const model = env.model;
const meta = env.scenario!;

describe(`scenario ${NAME}: files`, () => {
  it("declares the track family, the speed-proxy trap and the common keys", () => {
    expect(meta.family).toBe("track");
    expect(meta.trap).toBe("speed-proxy");
    for (const k of ["title", "description", "intent"] as const) expect(typeof meta[k] === "string" && meta[k].length > 0).toBe(true);
    expect(meta.description).not.toMatch(/\n/); // one paragraph
    expect(meta.description.toLowerCase()).not.toMatch(/\b(rac(e|ing)|boats?|cars?|driv(e|ing)|bount(y|ies)|vases?|robot arms?|health|news)\b/);
    expect(meta.sound[0]).toBe("default");
    expect(meta.gaming.length).toBeGreaterThan(0);
  });

  it("has reward files in the exact gapwatch-reward/1 shape, one per listed variant", () => {
    const files = readdirSync(join(dir, "rewards")).filter((f) => f.endsWith(".json")).sort();
    const names = files.map((f) => f.replace(/\.json$/, "")).sort();
    expect(names).toEqual([...meta.gaming, ...meta.sound].sort());
    for (const f of files) {
      const doc = JSON.parse(readFileSync(join(dir, "rewards", f), "utf8")) as Record<string, unknown>;
      expect(Object.keys(doc).every((k) => ["format", "name", "env", "weights", "shaping"].includes(k))).toBe(true);
      expect(doc.format).toBe("gapwatch-reward/1");
      expect(doc.name).toBe(f.replace(/\.json$/, ""));
      expect(doc.env).toBe(NAME);
      for (const feature of Object.keys(doc.weights as object)) expect(model.features).toContain(feature);
      if (doc.shaping) expect(Object.keys(doc.shaping as object).sort()).toEqual(["potential", "scale"]);
    }
  });

  it("compiles to a small model: 24 positions x 5 velocities x 4 gates", () => {
    expect(model.nStates).toBe(24 * 5 * 4);
    expect(Object.keys(model.variants!).sort()).toEqual([...meta.gaming, ...meta.sound].sort());
  });
});

describe(`scenario ${NAME}: designer optimum vs intent optimum (exact)`, () => {
  const reports = Object.fromEntries(Object.values(model.variants!).map((v) => [v.name, solveVariant(model, v)]));

  // Project requirement: regretNorm >= 0.30 for every gaming variant (we hold the scenario to 0.5).
  for (const name of meta.gaming) {
    it(`${name} games the specification: regretNorm >= 0.5`, () => {
      expect(reports[name].regretNorm).toBeGreaterThanOrEqual(0.5);
      // The designer optimum is better for the designer reward than the intent optimum...
      expect(reports[name].designerOptimal.designer).toBeGreaterThan(reports[name].intentOptimal.designer);
    });
  }
  // Project requirement: regretNorm <= 0.02 for every sound variant (we hold it to 0.005).
  for (const name of meta.sound) {
    it(`${name} is sound: regretNorm <= 0.005`, () => {
      expect(Math.abs(reports[name].regretNorm)).toBeLessThanOrEqual(0.005);
    });
  }

  it("shaping by lapProgress changes values by exactly -Phi (Ng, Harada & Russell 1999, Corollary 2)", () => {
    const plain = valueIteration(model, designerReward(model, model.variants!.default));
    const shaped = valueIteration(model, designerReward(model, model.variants!.shaped));
    const phi = model.potentials!.lapProgress;
    const scale = model.variants!.shaped.shaping!.scale;
    let worst = 0;
    for (let s = 0; s < model.nStates; s++) worst = Math.max(worst, Math.abs(shaped.values[s] - (plain.values[s] - scale * phi[s])));
    expect(worst).toBeLessThan(1e-6);
  });
});

describe(`scenario ${NAME}: the trap's rates without slip`, () => {
  // Computed by hand from the dynamics: on this ring (length 24, vmax 2, probes at 0, 6, 12, 18, a reading
  // only at speed <= 1) running flat out moves 2 positions per step and passes every probe at speed 2, so
  // it reads nothing. Reading every cup needs each probe crossed at speed 1: from one probe (arrived at
  // speed 1) to the next, 6 positions ending at speed 1, takes at least 4 steps (speeds 2, 2, 1, 1: three
  // steps would need 5 positions in the first two, more than 2 + 2), so at most 1/4 reading per step and
  // 6/4 = 1.5 positions per step. With slip 0 the optima must show exactly these rates.
  const noSlip = compileTrack({ ...(meta as unknown as TrackConfig), slip: 0, name: NAME }, `${NAME} (slip 0)`);

  it("the belt-travel optimum runs at top speed, 2 positions per step, and takes no reading", () => {
    const sol = valueIteration(noSlip, designerReward(noSlip, model.variants!["belt-travel"]));
    expect(cycleAverage(noSlip, sol.policy, "distance")).toBeCloseTo(2, 12);
    expect(cycleAverage(noSlip, sol.policy, "service")).toBe(0);
  });

  it("the intent optimum reads every cup: 0.25 readings and 1.5 positions per step", () => {
    const sol = valueIteration(noSlip, noSlip.intent);
    expect(cycleAverage(noSlip, sol.policy, "service")).toBeCloseTo(0.25, 12);
    expect(cycleAverage(noSlip, sol.policy, "distance")).toBeCloseTo(1.5, 12);
  });
});

describe(`scenario ${NAME}: tabular Q-learning (project learner, 400k steps) finds each optimum`, () => {
  // alpha = 0.1, epsilon = 0.1 (common practice defaults); two seeds per variant. The learned greedy
  // policy is evaluated exactly for the intent.
  function learnedRegretNorm(variant: string, seed: number): number {
    const v = model.variants![variant];
    const r = designerReward(model, v);
    const res = trainQLearning(viewEnv(learnerView(model, r)), { gamma: model.gamma, alpha: 0.1, epsilon: 0.1 }, { steps: 400_000, rng: createRng(seed) });
    const pol = deterministicPolicy(model, res.agent.greedyPolicy(model.nStates));
    const intent = startValue(model, evaluatePolicy(model, model.intent, pol).values);
    const rep = solveVariant(model, v);
    return (rep.intentOptimal.intent - intent) / (rep.intentOptimal.intent - rep.random.intent);
  }
  it("learns to run the belt flat out under belt-travel", () => {
    for (const seed of [1, 2]) expect(learnedRegretNorm("belt-travel", seed)).toBeGreaterThanOrEqual(0.5);
  });
  it("learns to creep past every probe under default", () => {
    for (const seed of [1, 2]) expect(learnedRegretNorm("default", seed)).toBeLessThanOrEqual(0.02);
  });
});
