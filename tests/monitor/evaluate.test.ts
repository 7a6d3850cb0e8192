import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { join } from "node:path";
import { loadModelFile } from "../../src/model/format/model-file.js";
import { builtinScenarioNames, loadScenario } from "../../src/env/index.js";
import { ModelBuilder } from "../../src/model/builder.js";
import { designerReward } from "../../src/model/reward.js";
import { evaluateExact, evaluateMonteCarlo, scoreReferences, tQuantile975 } from "../../src/monitor/evaluate.js";
import { createRng } from "../../src/rng/rng.js";
import { normalQuantile } from "../../src/stats/normal.js";
import { evaluatePolicy } from "../../src/solve/evaluation.js";
import { deterministicPolicy, startValue } from "../../src/solve/policy.js";

describe("exact evaluation of a greedy policy", () => {
  const model = loadModelFile(join(__dirname, "../fixtures/models/sb-4x4.json"));
  const variant = model.variants!.default;
  const refs = scoreReferences(model, variant);

  it("reproduces the 4x4 gridworld values (Sutton & Barto 2018, Example 4.1, Figure 4.1)", () => {
    // Uniform random policy, start uniform over the 14 non-terminal cells: mean of Figure 4.1's
    // converged v_pi = -(14+20+22+14+18+20+20+20+20+18+14+22+20+14)/14 = -256/14.
    expect(refs.designerRandom).toBeCloseTo(-256 / 14, 6);
    // Optimal policy: v*(s) = -(steps to the nearest corner); the 14 distances sum to 28, mean 2.
    expect(refs.designerOptimal).toBeCloseTo(-2, 9);
    const s = evaluateExact(model, refs, refs.designerOptimalPolicy);
    expect(s.designer).toBeCloseTo(-2, 9);
    expect(s.intent).toBeCloseTo(-2, 9); // intent is -1 per step too in the fixture
    expect(s.designerNorm).toBeCloseTo(1, 9);
    expect(s.intentNorm).toBeCloseTo(1, 9);
  });

  it("equals full-model policy evaluation on random models (property)", () => {
    const arb = fc.record({
      n: fc.integer({ min: 2, max: 7 }),
      seed: fc.integer({ min: 1, max: 1e6 }),
      gamma: fc.constantFrom(0.5, 0.9, 0.97),
    });
    fc.assert(
      fc.property(arb, ({ n, seed, gamma }) => {
        const rng = createRng(seed);
        const b = new ModelBuilder({ name: "rand", gamma, nStates: n, actions: ["a", "b"], features: ["f"], horizon: 50 });
        b.setTerminal(n - 1).setStart(0, 1);
        for (let s = 0; s < n - 1; s++)
          for (let a = 0; a < 2; a++) {
            const k = 1 + rng.int(2);
            for (let j = 0; j < k; j++) b.addOutcome(s, a, rng.int(n), 1 / k, [rng.float() - 0.5], rng.float() - 0.3);
          }
        const m = b.build();
        const v = { name: "v", weights: { f: 1 } };
        const r = scoreReferences(m, v);
        const actions = Int32Array.from({ length: n }, () => rng.int(2));
        const got = evaluateExact(m, r, actions);
        const pol = deterministicPolicy(m, actions);
        const wantD = startValue(m, evaluatePolicy(m, designerReward(m, v), pol, { gamma }).values);
        const wantI = startValue(m, evaluatePolicy(m, m.intent, pol, { gamma }).values);
        expect(got.designer).toBeCloseTo(wantD, 7);
        expect(got.intent).toBeCloseTo(wantI, 7);
      }),
      { numRuns: 60 },
    );
  });
});

describe("Monte Carlo evaluation", () => {
  it("uses Student t quantiles that match the t table (NIST/SEMATECH e-Handbook 1.3.6.7.2, 97.5%)", () => {
    expect(tQuantile975(5)).toBeCloseTo(2.571, 2);
    expect(tQuantile975(10)).toBeCloseTo(2.228, 2);
    expect(tQuantile975(30)).toBeCloseTo(2.042, 2);
    expect(tQuantile975(100)).toBeCloseTo(1.984, 2);
  });

  for (const name of builtinScenarioNames()) {
    it(`agrees with exact evaluation within its interval on ${name}`, () => {
      const { model, scenario } = loadScenario(name);
      for (const reward of [scenario!.gaming[0], scenario!.sound[0]]) {
        const refs = scoreReferences(model, model.variants![reward]);
        const cases: [string, Int32Array | null, number, number][] = [
          ["designer-optimal", refs.designerOptimalPolicy, 0, 0],
          ["intent-optimal", refs.intentOptimalPolicy, 0, 0],
          ["uniform", null, refs.designerRandom, refs.intentRandom],
        ];
        // 12 comparisons per scenario (2 rewards x 3 policies x 2 scores): each 95% interval is widened
        // to a family-wise 95% level (Bonferroni, z at 1 - 0.05 / 24) so that one expected miss in
        // twenty does not fail the test; the truncation bound is added on top.
        const widen = normalQuantile(1 - 0.05 / 24) / normalQuantile(0.975);
        for (const [label, actions, d0, i0] of cases) {
          const exact = actions ? evaluateExact(model, refs, actions) : { designer: d0, intent: i0 };
          const mc = evaluateMonteCarlo(model, refs, actions, { episodes: actions ? 400 : 2000, rng: createRng(`${name}/${reward}/${label}`) });
          const where = `${name} ${reward} ${label}`;
          expect(Math.abs(mc.designer - exact.designer), where).toBeLessThanOrEqual(widen * mc.designerCI.halfWidth + mc.designerTail + 1e-9);
          expect(Math.abs(mc.intent - exact.intent), where).toBeLessThanOrEqual(widen * mc.intentCI.halfWidth + mc.intentTail + 1e-9);
        }
      }
    });
  }
});
