/**
 * Start-state values solved on only the part of the model they depend on (src/solve/engine/local.ts,
 * `startStateValues` of default-solver.ts): against a closed form for a random walk, and against the
 * textbook synchronous evaluator (dp.ts `evaluatePolicy`, tol 1e-13) on random models, both where the
 * region is truncated and where it takes the whole model. Acceptance as for the engine: 1e-8.
 */
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { ModelBuilder } from "../../src/model/builder.js";
import type { FiniteModel } from "../../src/model/types.js";
import { startValuesEngine } from "../../src/solve/engine/index.js";
import { startStateValues } from "../../src/solve/default-solver.js";
import { evaluatePolicy, uniformPolicy, type Policy } from "../../src/solve/index.js";
import { properEpisodic, randomMdp } from "../helpers/random-mdp.js";

const TIGHT = 1e-13;
const ACCEPT = 1e-8;

/**
 * States 0..n-1 on a line; 0 is terminal; actions "left" (s - 1) and "right" (s + 1, staying at the
 * right end). Reward 1 on the step into 0, else 0.
 */
function line(n: number, start: number, gamma: number): FiniteModel {
  const b = new ModelBuilder({ name: "line", nStates: n, actions: ["left", "right"], features: ["r"], gamma, horizon: 100 });
  b.setTerminal(0);
  for (let s = 1; s < n; s++) {
    b.addOutcome(s, 0, s - 1, 1, [s - 1 === 0 ? 1 : 0]);
    b.addOutcome(s, 1, Math.min(n - 1, s + 1), 1, [0]);
  }
  b.setStart(start, 1);
  return b.build();
}

/**
 * Random "banded" models: every outcome moves at most `band` states away, so a walk from the start
 * spreads slowly and the start values depend on a small part of a long model (the truncated path).
 */
function bandedModel(): fc.Arbitrary<{ model: FiniteModel; policy: Policy; rewards: Float64Array[] }> {
  return fc
    .record({
      n: fc.integer({ min: 2000, max: 6000 }),
      nA: fc.integer({ min: 1, max: 3 }),
      band: fc.integer({ min: 2, max: 4 }),
      gamma: fc.double({ min: 0.2, max: 0.9, noNaN: true }),
      seed: fc.integer({ min: 1, max: 2 ** 30 }),
      starts: fc.array(fc.integer({ min: 0, max: 2 ** 30 }), { minLength: 1, maxLength: 3 }),
    })
    .map(({ n, nA, band, gamma, seed, starts }) => {
      // A small seeded generator (xorshift) for the many per-outcome draws; fast-check chooses the seed.
      let x = seed ^ 0x5bd1e995;
      const rnd = () => {
        x ^= x << 13;
        x ^= x >>> 17;
        x ^= x << 5;
        return (x >>> 0) / 2 ** 32;
      };
      for (let i = 0; i < 20; i++) rnd(); // small seeds give small first outputs
      const b = new ModelBuilder({ name: "banded", nStates: n, actions: Array.from({ length: nA }, (_, a) => `a${a}`), features: ["r", "q"], gamma, horizon: 100 });
      const terminal = new Uint8Array(n);
      for (let s = 0; s < n; s++) if (rnd() < 0.01) ((terminal[s] = 1), b.setTerminal(s));
      for (let s = 0; s < n; s++) {
        if (terminal[s]) continue;
        for (let a = 0; a < nA; a++) {
          // One outcome to the left, one to the right, maybe one more anywhere in the band (no traps).
          const k = 2 + Math.floor(rnd() * 2);
          const w = Array.from({ length: k }, () => 1 + Math.floor(rnd() * 5));
          const total = w.reduce((p, q) => p + q, 0);
          for (let i = 0; i < k; i++) {
            const step = 1 + Math.floor(rnd() * band);
            const t = Math.max(0, Math.min(n - 1, i === 0 ? s - step : i === 1 ? s + step : s + Math.round((rnd() * 2 - 1) * band)));
            b.addOutcome(s, a, t, w[i] / total, [rnd() * 2 - 1, rnd() < 0.1 ? 5 : 0]);
          }
        }
      }
      const weightOf = new Map<number, number>();
      for (const u of starts) {
        const s = u % n;
        weightOf.set(s, (weightOf.get(s) ?? 0) + 1 / starts.length);
      }
      for (const [s, w] of weightOf) b.setStart(s, w);
      const model = b.build();
      const policy = new Float64Array(n * nA);
      for (let s = 0; s < n; s++) {
        const w = Array.from({ length: nA }, () => (rnd() < 0.2 ? 0 : rnd()));
        const total = w.reduce((p, q) => p + q, 0);
        for (let a = 0; a < nA; a++) policy[s * nA + a] = total > 0 ? w[a] / total : a === 0 ? 1 : 0;
      }
      const rewards = [0, 1].map((f) => Float64Array.from({ length: model.next.length }, (_, o) => model.featureValues[o * 2 + f]));
      return { model, policy, rewards };
    });
}

function startStates(model: FiniteModel): number[] {
  return Array.from({ length: model.nStates }, (_, s) => s).filter((s) => model.start[s] > 0);
}

describe("start-state values (engine/local.ts)", () => {
  it("a random walk on a long line: the discounted first-passage closed form, solving a few hundred of 100,000 states", () => {
    // Symmetric simple random walk: the first passage from k to 0 takes T steps with
    // E[z^T] = F(z)^k, F(z) = (1 - sqrt(1 - z^2)) / z (Feller 1968, vol. I, ch. XI.3; from memory).
    // The reward is paid on step T, discounted by gamma^(T - 1): v(k) = F(gamma)^k / gamma.
    for (const [gamma, k] of [
      [0.9, 5],
      [0.99, 3],
      [0.5, 2],
    ] as const) {
      const model = line(100_000, k, gamma);
      const r = Float64Array.from(model.featureValues);
      const res = startValuesEngine(model, [r], uniformPolicy(model), { accuracy: 1e-10 });
      expect(res).not.toBeNull();
      const F = (1 - Math.sqrt(1 - gamma * gamma)) / gamma;
      expect(Math.abs(res!.values[0][k] - F ** k / gamma)).toBeLessThanOrEqual(1e-9);
      expect(res!.errorBound).toBeLessThanOrEqual(1e-10);
      expect(res!.solvedStates).toBeLessThan(5000);
      expect(res!.reachable).toBe(-1);
    }
  });

  it("random banded models and stochastic policies: within 1e-8 of the textbook evaluator at every start state, within the bound it reports; the region is truncated in a good share of them", () => {
    let truncated = 0;
    let runs = 0;
    fc.assert(
      fc.property(bandedModel(), ({ model, policy, rewards }) => {
        runs++;
        const res = startValuesEngine(model, rewards, policy, { accuracy: 1e-10 });
        expect(res).not.toBeNull();
        if (res!.reachable < 0) truncated++;
        for (let j = 0; j < rewards.length; j++) {
          const ref = evaluatePolicy(model, rewards[j], policy, { tol: TIGHT });
          // The reference is within gamma / (1 - gamma) * TIGHT of the fixed point (Puterman 1994, Theorem 6.3.1; from memory).
          const refErr = (model.gamma / (1 - model.gamma)) * TIGHT + 1e-12;
          for (const s of startStates(model)) {
            const d = Math.abs(res!.values[j][s] - ref.values[s]);
            expect(d).toBeLessThanOrEqual(ACCEPT);
            expect(d).toBeLessThanOrEqual(res!.errorBound + refErr);
          }
        }
      }),
      { numRuns: 60, seed: 20261202 },
    );
    expect(truncated).toBeGreaterThan(runs / 4);
  });

  it("small random models (whole model) and episodic gamma = 1 (whole-model fallback): same values as the textbook evaluator", () => {
    fc.assert(
      fc.property(randomMdp({ states: [1, 12], actions: [1, 3], gamma: [0.05, 0.95] }), ({ model, reward, gamma }) => {
        const ref = evaluatePolicy(model, reward, uniformPolicy(model), { gamma, tol: TIGHT });
        const [v] = startStateValues(model, [reward], uniformPolicy(model), { gamma });
        for (const s of startStates(model)) expect(Math.abs(v[s] - ref.values[s])).toBeLessThanOrEqual(ACCEPT);
      }),
      { numRuns: 100, seed: 7 },
    );
    fc.assert(
      fc.property(properEpisodic([1, 10], false), ({ model, reward }) => {
        expect(startValuesEngine(model, [reward], uniformPolicy(model), { gamma: 1 })).toBeNull();
        const ref = evaluatePolicy(model, reward, uniformPolicy(model), { gamma: 1, tol: TIGHT });
        const [v] = startStateValues(model, [reward], uniformPolicy(model), { gamma: 1 });
        for (const s of startStates(model)) expect(Math.abs(v[s] - ref.values[s])).toBeLessThanOrEqual(ACCEPT);
      }),
      { numRuns: 50, seed: 8 },
    );
  });

  it("a start state that is terminal has value 0; other states are not values (NaN)", () => {
    const b = new ModelBuilder({ name: "t", nStates: 3, actions: ["go"], features: ["r"], gamma: 0.9, horizon: 10 });
    b.setTerminal(2);
    b.addOutcome(0, 0, 1, 1, [1]);
    b.addOutcome(1, 0, 2, 1, [2]);
    b.setStart(0, 0.5);
    b.setStart(2, 0.5);
    const model = b.build();
    const res = startValuesEngine(model, [Float64Array.from(model.featureValues)], uniformPolicy(model));
    // v(0) = 1 + 0.9 * 2 by hand.
    expect(res!.values[0][0]).toBeCloseTo(2.8, 12);
    expect(res!.values[0][2]).toBe(0);
    expect(Number.isNaN(res!.values[0][1])).toBe(true);
  });
});
