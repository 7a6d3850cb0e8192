import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { klFromReference, softValueIteration } from "../../src/solve/soft.js";
import { ModelBuilder } from "../../src/model/builder.js";
import type { FiniteModel } from "../../src/model/types.js";
import { evaluatePolicy } from "../../src/solve/evaluation.js";
import { startValue, uniformPolicy } from "../../src/solve/policy.js";
import { valueIteration } from "../../src/solve/value-iteration.js";
import { createRng } from "../../src/rng/rng.js";
import { InputError } from "../../src/errors.js";

/** A random small model: 2..6 non-terminal states, 1..2 terminals, 2..4 actions, 1..3 outcomes per pair. */
function randomModel(seed: number, gamma: number): { model: FiniteModel; reward: Float64Array } {
  const rng = createRng(`soft${seed}`);
  const nNon = 2 + rng.int(5);
  const nTerm = 1 + rng.int(2);
  const nS = nNon + nTerm;
  const nA = 2 + rng.int(3);
  const b = new ModelBuilder({ name: `rand${seed}`, nStates: nS, actions: Array.from({ length: nA }, (_, a) => `a${a}`), features: ["x"], gamma, horizon: 100 });
  for (let s = 0; s < nNon; s++) {
    for (let a = 0; a < nA; a++) {
      const k = 1 + rng.int(3);
      const raw = Array.from({ length: k }, () => 0.1 + rng.float());
      const tot = raw.reduce((x, y) => x + y, 0);
      for (let i = 0; i < k; i++) b.addOutcome(s, a, rng.int(nS), raw[i] / tot, [rng.float() * 2 - 1]);
    }
  }
  for (let t = nNon; t < nS; t++) b.setTerminal(t);
  b.setStart(0, 1);
  const model = b.build();
  return { model, reward: Float64Array.from({ length: model.next.length }, (_, o) => model.featureValues[o]) };
}

/** A random reference policy with full support. */
function randomReference(model: FiniteModel, seed: number): Float64Array {
  const rng = createRng(`ref${seed}`);
  const nA = model.nActions;
  const p = new Float64Array(model.nStates * nA);
  for (let s = 0; s < model.nStates; s++) {
    let tot = 0;
    for (let a = 0; a < nA; a++) tot += p[s * nA + a] = 0.05 + rng.float();
    for (let a = 0; a < nA; a++) p[s * nA + a] /= tot;
  }
  return p;
}

const BETAS = [0, 1, 10, 100, 1000];

describe("soft value iteration (KL-control identity: Todorov 2007, Ziebart 2010; from memory)", () => {
  it("beta = 0 is exactly the reference policy: values equal evaluatePolicy(uniform), KL = 0", () => {
    for (let seed = 1; seed <= 40; seed++) {
      const { model, reward } = randomModel(seed, 0.9);
      const soft = softValueIteration(model, reward, { beta: 0, tol: 1e-13 });
      const pe = evaluatePolicy(model, reward, uniformPolicy(model), { tol: 1e-13 });
      for (let s = 0; s < model.nStates; s++) expect(Math.abs(soft.values[s] - pe.values[s])).toBeLessThan(1e-9);
      expect(Array.from(soft.policy)).toEqual(Array.from(uniformPolicy(model)));
      expect(soft.kl.start).toBe(0);
    }
  });

  it("values rise monotonically with beta toward valueIteration's optimum, within log(nA) / (beta (1 - gamma))", () => {
    // Bound: with a uniform reference, max_a q - log(nA)/beta <= softmax <= max_a q per backup, so
    // 0 <= V* - V_beta <= log(nA) / (beta (1 - gamma)) (derived from the definition).
    const gamma = 0.9;
    let checkedGreedy = 0;
    for (let seed = 1; seed <= 40; seed++) {
      const { model, reward } = randomModel(seed, gamma);
      const opt = valueIteration(model, reward, { tol: 1e-13 });
      const nA = model.nActions;
      let prev: Float64Array | null = null;
      for (const beta of BETAS) {
        const soft = softValueIteration(model, reward, { beta, tol: 1e-13 });
        expect(soft.converged).toBe(true);
        for (let s = 0; s < model.nStates; s++) {
          if (prev) expect(soft.values[s]).toBeGreaterThanOrEqual(prev[s] - 1e-10);
          expect(soft.values[s]).toBeLessThanOrEqual(opt.values[s] + 1e-10);
          if (beta > 0) expect(opt.values[s] - soft.values[s]).toBeLessThanOrEqual(Math.log(nA) / (beta * (1 - gamma)) + 1e-10);
        }
        prev = soft.values;
        if (beta === 1000) {
          // Greedy action of the soft policy = optimal action wherever the optimal action wins by more than
          // 2 gamma log(nA) / (beta (1 - gamma)) (then Q_beta cannot reorder it).
          const margin = (2 * gamma * Math.log(nA)) / (beta * (1 - gamma));
          for (let s = 0; s < model.nStates; s++) {
            if (model.terminal[s]) continue;
            const row = Array.from(opt.q.subarray(s * nA, (s + 1) * nA));
            const sorted = [...row].sort((a, b) => b - a);
            if (sorted[0] - sorted[1] <= margin + 1e-9) continue;
            let g = 0;
            for (let a = 1; a < nA; a++) if (soft.policy[s * nA + a] > soft.policy[s * nA + g]) g = a;
            expect(g).toBe(opt.policy[s]);
            checkedGreedy++;
          }
        }
      }
    }
    expect(checkedGreedy).toBeGreaterThan(50);
  });

  it("V_soft = V^pi_r - K^pi / beta for the soft policy (the identity the objective is built on)", () => {
    for (let seed = 1; seed <= 20; seed++) {
      const { model, reward } = randomModel(seed, 0.8);
      const ref = randomReference(model, seed);
      for (const beta of [0.5, 3, 30]) {
        const soft = softValueIteration(model, reward, { beta, reference: ref, tol: 1e-13 });
        const vr = evaluatePolicy(model, reward, soft.policy, { tol: 1e-13 }).values;
        for (let s = 0; s < model.nStates; s++) expect(Math.abs(soft.values[s] - (vr[s] - soft.kl.values[s] / beta))).toBeLessThan(1e-8);
      }
    }
  });

  it("property: expected KL from the start (and designer return) is 0 at beta = 0 and non-decreasing in beta", () => {
    // For lambda = 1/beta, pi_beta maximizes J = R(pi) - lambda K(pi) at the start; comparing the optima at
    // lambda1 > lambda2 gives (lambda1 - lambda2)(K1 - K2) <= 0 (standard trade-off argument).
    fc.assert(
      fc.property(fc.integer({ min: 1, max: 1_000_000 }), fc.boolean(), fc.constantFrom(0.5, 0.9), (seed, customRef, gamma) => {
        const { model, reward } = randomModel(seed, gamma);
        const reference = customRef ? randomReference(model, seed) : undefined;
        let prevKl = -Infinity;
        let prevR = -Infinity;
        for (const beta of [0, 0.3, 1, 3, 10, 100]) {
          const soft = softValueIteration(model, reward, { beta, reference, tol: 1e-13 });
          if (beta === 0) expect(soft.kl.start).toBe(0);
          expect(soft.kl.start).toBeGreaterThanOrEqual(prevKl - 1e-9);
          const R = startValue(model, evaluatePolicy(model, reward, soft.policy, { tol: 1e-13 }).values);
          expect(R).toBeGreaterThanOrEqual(prevR - 1e-9);
          prevKl = soft.kl.start;
          prevR = R;
        }
      }),
      { numRuns: 60 },
    );
  });

  it("large beta does not overflow (stable log-sum-exp) and Infinity gives the optimum", () => {
    const { model, reward } = randomModel(3, 0.9);
    const big = softValueIteration(model, reward, { beta: 1e8, tol: 1e-13 });
    const inf = softValueIteration(model, reward, { beta: Infinity, tol: 1e-13 });
    const opt = valueIteration(model, reward, { tol: 1e-13 });
    for (let s = 0; s < model.nStates; s++) {
      expect(Number.isFinite(big.values[s])).toBe(true);
      expect(Math.abs(big.values[s] - opt.values[s])).toBeLessThan(1e-6);
      expect(Math.abs(inf.values[s] - opt.values[s])).toBeLessThan(1e-10);
    }
  });

  it("reference support is respected: an action with pi0 = 0 gets probability 0", () => {
    const { model, reward } = randomModel(5, 0.9);
    const nA = model.nActions;
    const ref = new Float64Array(model.nStates * nA);
    for (let s = 0; s < model.nStates; s++) for (let a = 1; a < nA; a++) ref[s * nA + a] = 1 / (nA - 1);
    const soft = softValueIteration(model, reward, { beta: 50, reference: ref });
    for (let s = 0; s < model.nStates; s++) if (!model.terminal[s]) expect(soft.policy[s * nA]).toBe(0);
    expect(Number.isFinite(soft.kl.start)).toBe(true);
  });
});

describe("klFromReference", () => {
  it("hand-computed: one state, two actions, pi = (3/4, 1/4) vs uniform, gamma 0.5, self-loop", () => {
    // KL = 0.75 ln(1.5) + 0.25 ln(0.5); the state loops to itself with probability 1/2 and ends otherwise,
    // so K = KL / (1 - 0.5 * 0.5) = KL * 4/3.
    const b = new ModelBuilder({ name: "kl", nStates: 2, actions: ["l", "r"], features: [], gamma: 0.5, horizon: 10 });
    b.addOutcome(0, 0, 0, 0.5, null).addOutcome(0, 0, 1, 0.5, null);
    b.addOutcome(0, 1, 0, 0.5, null).addOutcome(0, 1, 1, 0.5, null);
    b.setTerminal(1).setStart(0, 1);
    const m = b.build();
    const pi = Float64Array.from([0.75, 0.25, 0.5, 0.5]);
    const r = klFromReference(m, pi, uniformPolicy(m));
    const kl = 0.75 * Math.log(1.5) + 0.25 * Math.log(0.5);
    expect(r.perState[0]).toBeCloseTo(kl, 14);
    expect(r.perState[1]).toBe(0);
    expect(r.start).toBeCloseTo((kl * 4) / 3, 10);
  });

  it("rejects a policy with the wrong shape or a row that does not sum to 1", () => {
    const { model } = randomModel(1, 0.9);
    expect(() => klFromReference(model, new Float64Array(3), uniformPolicy(model))).toThrow(InputError);
    const bad = uniformPolicy(model);
    bad[0] = 0.9;
    expect(() => klFromReference(model, bad, uniformPolicy(model))).toThrow(InputError);
    expect(() => softValueIteration(model, new Float64Array(model.next.length), { beta: -1 })).toThrow(InputError);
  });
});
