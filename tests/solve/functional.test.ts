/**
 * One-pass evaluation of deterministic policies over single-outcome actions (src/solve/engine/functional.ts)
 * against the textbook synchronous evaluator (dp.ts `evaluatePolicy`, tol 1e-13) and closed forms.
 */
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { ModelBuilder } from "../../src/model/builder.js";
import { evaluateFunctional } from "../../src/solve/engine/index.js";
import { actionPolicyValues } from "../../src/solve/default-solver.js";
import { deterministicPolicy, evaluatePolicy } from "../../src/solve/index.js";
import { randomMdp } from "../helpers/random-mdp.js";

const maxDiff = (a: Float64Array, b: Float64Array) => a.reduce((m, x, i) => Math.max(m, Math.abs(x - b[i])), 0);

describe("evaluateFunctional", () => {
  it("random deterministic models and policies: within 1e-8 of the textbook evaluator (paths into terminals, into cycles, self-loops)", () => {
    fc.assert(
      fc.property(
        randomMdp({ states: [1, 40], actions: [1, 4], gamma: [0.05, 0.97], deterministic: true }),
        fc.array(fc.nat(), { minLength: 40, maxLength: 40 }),
        ({ model, reward, gamma }, picks) => {
          const actions = Int32Array.from({ length: model.nStates }, (_, s) => (model.terminal[s] ? -1 : picks[s] % model.nActions));
          const ones = new Float64Array(reward.length).fill(1);
          const got = evaluateFunctional(model, [reward, ones], actions, gamma);
          expect(got).not.toBeNull();
          const pol = deterministicPolicy(model, actions);
          for (const [j, r] of [reward, ones].entries()) {
            const ref = evaluatePolicy(model, r, pol, { gamma, tol: 1e-13 });
            expect(maxDiff(got![j], ref.values)).toBeLessThanOrEqual(1e-8);
          }
        },
      ),
      { numRuns: 200, seed: 41 },
    );
  });

  it("a ring of L states paying 1 per step: v = 1 / (1 - gamma) everywhere (geometric series); with a tail of k states into it, the same", () => {
    const L = 7;
    const k = 3;
    const gamma = 0.9;
    const b = new ModelBuilder({ name: "ring", nStates: L + k, actions: ["go"], features: ["r"], gamma, horizon: 10 });
    for (let s = 0; s < L; s++) b.addOutcome(s, 0, (s + 1) % L, 1, [1]);
    for (let s = L; s < L + k; s++) b.addOutcome(s, 0, s === L + k - 1 ? 0 : s + 1, 1, [1]);
    b.setStart(L, 1);
    const model = b.build();
    const v = evaluateFunctional(model, [Float64Array.from(model.featureValues)], new Int32Array(L + k), gamma)!;
    for (let s = 0; s < L + k; s++) expect(v[0][s]).toBeCloseTo(1 / (1 - gamma), 12);
  });

  it("declines stochastic chosen actions and cycles at gamma = 1; actionPolicyValues then answers through the engine", () => {
    fc.assert(
      fc.property(randomMdp({ states: [2, 20], actions: [1, 3], gamma: [0.1, 0.95], deterministic: false }), ({ model, reward, gamma }) => {
        const actions = Int32Array.from({ length: model.nStates }, (_, s) => (model.terminal[s] ? -1 : 0));
        const ref = evaluatePolicy(model, reward, deterministicPolicy(model, actions), { gamma, tol: 1e-13 });
        const [v] = actionPolicyValues(model, [reward], actions, { gamma });
        expect(maxDiff(v, ref.values)).toBeLessThanOrEqual(1e-8);
        let stochastic = false;
        for (let s = 0; s < model.nStates; s++) {
          if (model.terminal[s]) continue;
          const k = s * model.nActions;
          if (model.saStart[k + 1] - model.saStart[k] > 1) stochastic = true;
        }
        if (stochastic) expect(evaluateFunctional(model, [reward], actions, gamma)).toBeNull();
      }),
      { numRuns: 100, seed: 42 },
    );
    const b = new ModelBuilder({ name: "loop", nStates: 2, actions: ["go"], features: ["r"], gamma: 1, horizon: 10 });
    b.addOutcome(0, 0, 1, 1, [1]);
    b.addOutcome(1, 0, 0, 1, [1]);
    b.setStart(0, 1);
    const loop = b.build();
    expect(evaluateFunctional(loop, [Float64Array.from(loop.featureValues)], new Int32Array(2), 1)).toBeNull();
  });
});
