/**
 * The component-wise engine (src/solve/engine) against the textbook synchronous solvers of dp.ts run
 * to a tight tolerance, and against textbook worked examples (REFERENCE_VALUES.md, section named
 * beside each check). Acceptance: values within 1e-8 in the max norm; greedy policies identical
 * wherever the best action beats the second best by more than 1e-8.
 */
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { lavaModel } from "../../src/bench/lava.js";
import { ModelBuilder } from "../../src/model/builder.js";
import { builtinScenarioNames, loadScenario, resolveReward } from "../../src/env/index.js";
import { designerReward } from "../../src/model/reward.js";
import type { FiniteModel } from "../../src/model/types.js";
import { deterministicPolicy, evaluatePolicy, uniformPolicy, valueIteration, type Policy } from "../../src/solve/index.js";
import { evaluatePolicyEngine, planValueIteration, stronglyConnected, valueIterationEngine } from "../../src/solve/engine/index.js";
import { example41 } from "../helpers/example41.js";
import { properEpisodic, randomMdp } from "../helpers/random-mdp.js";

const TIGHT = 1e-13;
const ACCEPT = 1e-8;
const maxDiff = (a: Float64Array, b: Float64Array) => a.reduce((m, x, i) => Math.max(m, Math.abs(x - b[i])), 0);

/** Engine value iteration vs dp.ts valueIteration (synchronous, tol 1e-13): values and greedy policy. */
function checkOptimal(model: FiniteModel, reward: Float64Array, gamma: number, opts: { directMax?: number } = {}): void {
  const ref = valueIteration(model, reward, { gamma, tol: TIGHT });
  expect(ref.converged).toBe(true);
  const eng = valueIterationEngine(model, reward, { gamma, accuracy: 1e-10, ...opts });
  expect(eng.converged).toBe(true);
  expect(maxDiff(eng.values, ref.values)).toBeLessThanOrEqual(ACCEPT);
  checkBound(eng, ref.values, gamma);
  const nA = model.nActions;
  for (let s = 0; s < model.nStates; s++) {
    if (model.terminal[s]) {
      expect(eng.policy[s]).toBe(-1);
      continue;
    }
    // Gap between the best and the second-best action value of the reference.
    const q = ref.q.subarray(s * nA, (s + 1) * nA);
    const best = q[ref.policy[s]];
    let second = -Infinity;
    for (let a = 0; a < nA; a++) if (a !== ref.policy[s] && q[a] > second) second = q[a];
    if (best - second > ACCEPT) expect(eng.policy[s]).toBe(ref.policy[s]);
  }
}

/** Engine policy evaluation vs dp.ts evaluatePolicy (synchronous sweeps, tol 1e-13). */
function checkEvaluation(model: FiniteModel, reward: Float64Array, policy: Policy, gamma: number, opts: { directMax?: number } = {}): void {
  const ref = evaluatePolicy(model, reward, policy, { gamma, tol: TIGHT });
  expect(ref.converged).toBe(true);
  const eng = evaluatePolicyEngine(model, reward, policy, { gamma, accuracy: 1e-10, ...opts });
  expect(eng.converged).toBe(true);
  expect(maxDiff(eng.values, ref.values)).toBeLessThanOrEqual(ACCEPT);
  checkBound(eng, ref.values, gamma);
}

/**
 * The engine's `errorBound` holds against the reference, whose own distance to the fixed point is at
 * most gamma / (1 - gamma) * TIGHT after its last sweep (Puterman 1994, Theorem 6.3.1, from memory),
 * plus rounding. gamma = 1: the reference has no such bound; only the acceptance check applies.
 */
function checkBound(eng: { values: Float64Array; errorBound: number }, ref: Float64Array, gamma: number): void {
  if (gamma >= 1) return;
  expect(eng.errorBound).toBeLessThanOrEqual(1e-10);
  const scale = ref.reduce((m, x) => Math.max(m, Math.abs(x)), 1);
  expect(maxDiff(eng.values, ref)).toBeLessThanOrEqual(eng.errorBound + (gamma / (1 - gamma)) * TIGHT + 1e-13 * scale);
}

describe("strongly connected components (Tarjan 1972)", () => {
  it("a small graph with a known condensation, components sinks first", () => {
    // Hand-made: 0 -> 1 -> 2 -> 0 (a cycle), 2 -> 3, 3 -> 4 -> 3 (a cycle), 5 -> 0, 6 alone.
    // Components {0,1,2}, {3,4}, {5}, {6}; {3,4} must come before {0,1,2}, which comes before {5}.
    const edges = [[1], [2], [0, 3], [4], [3], [0], []];
    const rowStart = new Int32Array(8);
    edges.forEach((e, i) => (rowStart[i + 1] = rowStart[i] + e.length));
    const g = { n: 7, rowStart, col: Int32Array.from(edges.flat()) };
    const c = stronglyConnected(g);
    expect(c.count).toBe(4);
    const sets = Array.from({ length: c.count }, (_, k) => Array.from(c.members.subarray(c.compStart[k], c.compStart[k + 1])).sort());
    expect(sets).toContainEqual([0, 1, 2]);
    expect(sets).toContainEqual([3, 4]);
    expect(c.comp[3]).toBeLessThan(c.comp[0]);
    expect(c.comp[0]).toBeLessThan(c.comp[5]);
    // Reverse topological order: every edge goes to the same or an earlier component.
    for (let i = 0; i < 7; i++) for (let e = rowStart[i]; e < rowStart[i + 1]; e++) expect(c.comp[g.col[e]]).toBeLessThanOrEqual(c.comp[i]);
  });

  it("a path of a million nodes (no recursion) and a million-node cycle", () => {
    const n = 1_000_000;
    const rowStart = new Int32Array(n + 1);
    for (let i = 0; i < n; i++) rowStart[i + 1] = i + 1 < n ? i + 1 : n - 1;
    const path = stronglyConnected({ n, rowStart, col: Int32Array.from({ length: n - 1 }, (_, i) => i + 1) });
    expect(path.count).toBe(n);
    expect(path.comp[n - 1]).toBe(0);
    const ring = Int32Array.from({ length: n + 1 }, (_, i) => i);
    const cycle = stronglyConnected({ n, rowStart: ring, col: Int32Array.from({ length: n }, (_, i) => (i + 1) % n) });
    expect(cycle.count).toBe(1);
  });
});

describe("Sutton & Barto 2018, Example 4.1 (4x4 gridworld, gamma = 1)", () => {
  const { model, reward } = example41();
  const vpi = [0, -14, -20, -22, -14, -18, -20, -20, -20, -20, -18, -14, -22, -20, -14, 0];

  for (const directMax of [64, 0]) {
    it(`v_pi of the equiprobable policy = -14, -20, -22, ... (REFERENCE_VALUES 1.1, Figure 4.1; ${directMax ? "dense solve" : "sweeps with the exit-time certificate"})`, () => {
      // Sutton & Barto 2018, Figure 4.1, k = infinity
      const ev = evaluatePolicyEngine(model, reward, uniformPolicy(model), { accuracy: 1e-10, directMax });
      expect(ev.converged).toBe(true);
      vpi.forEach((v, s) => expect(Math.abs(ev.values[s] - v)).toBeLessThanOrEqual(1e-9));
      expect(ev.stats.components).toBe(1);
      expect(ev.stats.directSolves).toBe(directMax ? 1 : 0);
      expect(ev.errorBound).toBeLessThanOrEqual(1e-10);
    });
  }

  it("v* = -(steps to the nearest terminal corner), and the greedy policy matches dp.ts", () => {
    // Sutton & Barto 2018, Example 4.1 / Figure 4.1: the greedy policy is optimal, v* = -(shortest distance)
    const vstar = [0, -1, -2, -3, -1, -2, -3, -2, -2, -3, -2, -1, -3, -2, -1, 0];
    const eng = valueIterationEngine(model, reward);
    expect(eng.converged).toBe(true);
    vstar.forEach((v, s) => expect(eng.values[s]).toBeCloseTo(v, 9));
    checkOptimal(model, reward, 1);
    // "up" in the top row stays forever: an improper policy, so no exit-time certificate exists.
    expect(eng.errorBound).toBe(Infinity);
  });
});

describe("edge cases of gamma = 1 (hand-made models; values by hand from the Bellman equations)", () => {
  /** 0 <-> 1 a closed class (no terminal reachable), 2 -> 0, 3 -> terminal 4; rewards given per state. */
  function closedClass(r01: number): { model: FiniteModel; reward: Float64Array } {
    const b = new ModelBuilder({ name: "closed", nStates: 5, actions: ["go"], features: ["r"], gamma: 1, horizon: 100 });
    b.setTerminal(4).setStart(3, 1);
    b.addOutcome(0, 0, 1, 1, [r01]);
    b.addOutcome(1, 0, 0, 1, [0]);
    b.addOutcome(2, 0, 0, 1, [0]);
    b.addOutcome(3, 0, 4, 1, [2]);
    const model = b.build();
    return { model, reward: Float64Array.from(model.featureValues) };
  }

  it("a closed class with zero reward is worth 0; with reward its value is infinite (NaN here) and flagged", () => {
    // v = r + v on a cycle: a solution exists only when the cycle's reward is 0 (then v = 0 on and into it).
    const zero = closedClass(0);
    const ev0 = evaluatePolicyEngine(zero.model, zero.reward, uniformPolicy(zero.model), { directMax: 0 });
    expect(ev0.converged).toBe(true);
    expect(Array.from(ev0.values)).toEqual([0, 0, 0, 2, 0]);
    const one = closedClass(1);
    for (const directMax of [0, 64]) {
      const ev1 = evaluatePolicyEngine(one.model, one.reward, uniformPolicy(one.model), { directMax });
      expect(ev1.converged).toBe(false);
      expect(Number.isNaN(ev1.values[0]) && Number.isNaN(ev1.values[2])).toBe(true);
      // The part that does terminate is unaffected: v(3) = 2.
      expect(ev1.values[3]).toBe(2);
    }
  });

  it("a self-loop of probability 1/2 with reward -1 before a terminal: v = -2 in one closed-form backup", () => {
    // v = -1 + v / 2  =>  v = -2 (Sutton & Barto 2018, eq. 4.4 for a single state)
    const b = new ModelBuilder({ name: "loop", nStates: 2, actions: ["stay", "quit"], features: ["r"], gamma: 1, horizon: 100 });
    b.setTerminal(1).setStart(0, 1);
    b.addOutcome(0, 0, 0, 0.5, [-1]).addOutcome(0, 0, 1, 0.5, [-1]);
    b.addOutcome(0, 1, 1, 1, [-3]);
    const model = b.build();
    const reward = Float64Array.from(model.featureValues);
    const vi = valueIterationEngine(model, reward);
    expect(vi.values[0]).toBe(-2);
    expect(vi.policy[0]).toBe(0);
    expect(vi.stats.singletons).toBe(1);
    expect(vi.stats.backups).toBe(1);
    const ev = evaluatePolicyEngine(model, reward, uniformPolicy(model));
    // Uniform: v = 0.5 * (-1 + v / 2) + 0.5 * (-3)  =>  0.75 v = -2  =>  v = -8/3
    expect(ev.values[0]).toBeCloseTo(-8 / 3, 14);
  });
});

describe("built-in scenarios: every variant's designer reward and the intent", () => {
  for (const name of builtinScenarioNames()) {
    it(`${name}: v*, greedy policy, v of the uniform and of the designer-optimal policy`, () => {
      const model = loadScenario(name).model;
      const gamma = model.gamma;
      const plan = planValueIteration(model);
      const rewards: [string, Float64Array][] = Object.keys(model.variants ?? {}).map((v) => [v, designerReward(model, resolveReward(model, v), gamma)]);
      rewards.push(["intent", model.intent]);
      expect(rewards.length).toBeGreaterThan(1);
      for (const [, reward] of rewards) {
        checkOptimal(model, reward, gamma);
        const eng = valueIterationEngine(model, reward, { accuracy: 1e-10 }, plan);
        expect(eng.errorBound).toBeLessThanOrEqual(1e-10);
        checkEvaluation(model, reward, uniformPolicy(model), gamma);
        checkEvaluation(model, reward, deterministicPolicy(model, eng.policy), gamma);
      }
    });
  }
});

describe("the benchmark lava field (src/bench/lava.ts) at a small size", () => {
  it("24 x 17: v*, greedy policy, v of the uniform policy", () => {
    const { model, reward } = lavaModel(24, 17);
    checkOptimal(model, reward, model.gamma);
    checkEvaluation(model, reward, uniformPolicy(model), model.gamma);
    checkEvaluation(model, model.intent, uniformPolicy(model), model.gamma);
    // Every ordinary cell reaches every other: one component of 24 * 17 - 1 (goal) - 22 (lava) states.
    const eng = valueIterationEngine(model, reward);
    expect(eng.stats.largestComponent).toBe(24 * 17 - 1 - 22);
  });
});

/** Uniform policy, or a one-hot policy from `choice`. */
function policyFrom(model: FiniteModel, choice: number[] | null): Policy {
  if (!choice) return uniformPolicy(model);
  return deterministicPolicy(model, Int32Array.from({ length: model.nStates }, (_, s) => (model.terminal[s] ? -1 : choice[s % choice.length] % model.nActions)));
}

describe("random MDPs (fast-check): engine vs textbook", () => {
  const choice = fc.option(fc.array(fc.nat(), { minLength: 1, maxLength: 8 }), { nil: null });
  const directMax = fc.constantFrom(0, 64);

  it("discounted, stochastic and deterministic, with self-loops and unreachable states (1..8 states)", () => {
    fc.assert(
      fc.property(randomMdp({ states: [1, 8], actions: [1, 4], gamma: [0.3, 0.97] }), choice, directMax, ({ model, reward, gamma }, pick, dm) => {
        checkOptimal(model, reward, gamma);
        checkEvaluation(model, reward, policyFrom(model, pick), gamma, { directMax: dm });
      }),
      { numRuns: 150 },
    );
  });

  it("discounted, larger (10..60 states), so components of many states arise", () => {
    fc.assert(
      fc.property(randomMdp({ states: [10, 60], actions: [1, 3], gamma: [0.5, 0.99], rewardRange: 3 }), choice, directMax, ({ model, reward, gamma }, pick, dm) => {
        checkOptimal(model, reward, gamma);
        checkEvaluation(model, reward, policyFrom(model, pick), gamma, { directMax: dm });
      }),
      { numRuns: 60 },
    );
  });

  it("episodic, gamma = 1, every policy proper: values, and the exit-time certificate holds", () => {
    fc.assert(
      fc.property(fc.boolean().chain((det) => properEpisodic([1, 30], det)), choice, directMax, ({ model, reward }, pick, dm) => {
        checkOptimal(model, reward, 1);
        checkEvaluation(model, reward, policyFrom(model, pick), 1, { directMax: dm });
        const eng = valueIterationEngine(model, reward, { accuracy: 1e-10 });
        expect(eng.errorBound).toBeLessThanOrEqual(1e-10);
        const ev = evaluatePolicyEngine(model, reward, policyFrom(model, pick), { accuracy: 1e-10, directMax: dm });
        expect(ev.errorBound).toBeLessThanOrEqual(1e-10);
      }),
      { numRuns: 100 },
    );
  });

  it("the stats count every live state once in some component", () => {
    fc.assert(
      fc.property(randomMdp({ states: [1, 20], actions: [1, 3], gamma: [0.5, 0.9] }), ({ model, reward, gamma }) => {
        const eng = valueIterationEngine(model, reward, { gamma });
        const plan = planValueIteration(model);
        const live = model.terminal.reduce((n, t) => n + (t ? 0 : 1), 0);
        expect(plan.states.length).toBe(live);
        expect(new Set(plan.states).size).toBe(live);
        expect(eng.stats.components).toBe(plan.order.count);
        expect(eng.stats.backups).toBeGreaterThanOrEqual(live);
      }),
      { numRuns: 100 },
    );
  });
});
