/**
 * The default exact solver of the commands (src/solve/default-solver.ts: the component-wise engine
 * behind `optimalSolution` / `policyValues`) against the textbook synchronous solvers of dp.ts run to a
 * tight tolerance (value iteration, Sutton & Barto 2018, section 4.4; iterative policy evaluation,
 * section 4.1), on random models (fast-check): stochastic and deterministic, with self-loops and
 * states unreachable from the start (tests/helpers/random-mdp.ts), discounted and episodic gamma = 1.
 * Acceptance: values within 1e-8 in the max norm. Ties: the greedy rule of dp.ts (lowest action index
 * among the maxima); models whose actions are duplicated (action nA + a copies action a) have exact
 * ties by construction, so the chosen action must be the lower copy.
 */
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import type { FiniteModel } from "../../src/model/types.js";
import { optimalSolution, policyValues } from "../../src/solve/default-solver.js";
import { deterministicPolicy, evaluatePolicy, uniformPolicy, valueIteration } from "../../src/solve/index.js";
import { properEpisodic, randomMdp, rebuildModel } from "../helpers/random-mdp.js";

const TIGHT = 1e-13;
const ACCEPT = 1e-8;
/** Reference action values this close to the best are an exact tie (the textbook's rounding aside). */
const EXACT_TIE = 1e-11;
const maxDiff = (a: Float64Array, b: Float64Array) => a.reduce((m, x, i) => Math.max(m, Math.abs(x - b[i])), 0);

/** The same model with every action listed twice (actions nA..2nA-1 copy 0..nA-1): exact ties everywhere. */
function doubled(model: FiniteModel, reward: Float64Array): { model: FiniteModel; reward: Float64Array } {
  const nA = model.nActions;
  const actions = [...model.actions, ...model.actions.map((a) => `${a}-copy`)];
  const m = rebuildModel(model, { name: "doubled", actions }, (b, s, a, k) => {
    for (const copy of [a, a + nA]) for (let o = model.saStart[k]; o < model.saStart[k + 1]; o++) b.addOutcome(s, copy, model.next[o], model.prob[o], [reward[o]]);
  });
  return { model: m, reward: Float64Array.from(m.featureValues) };
}

/** optimalSolution vs valueIteration: values, near-optimal actions, and the lowest index among exact ties. */
function checkOptimal(model: FiniteModel, reward: Float64Array, gamma: number): Int32Array {
  const ref = valueIteration(model, reward, { gamma, tol: TIGHT });
  expect(ref.converged).toBe(true);
  const sol = optimalSolution(model, reward, { gamma });
  expect(sol.converged).toBe(true);
  expect(maxDiff(sol.values, ref.values)).toBeLessThanOrEqual(ACCEPT);
  const nA = model.nActions;
  for (let s = 0; s < model.nStates; s++) {
    if (model.terminal[s]) continue;
    const q = ref.q.subarray(s * nA, (s + 1) * nA);
    const best = Math.max(...q);
    const a = sol.policy[s];
    expect(q[a]).toBeGreaterThanOrEqual(best - ACCEPT);
    for (let b = 0; b < a; b++) expect(q[b]).toBeLessThan(best - EXACT_TIE);
  }
  return sol.policy;
}

/** policyValues vs evaluatePolicy for the uniform policy and for a deterministic one. */
function checkEvaluation(model: FiniteModel, reward: Float64Array, gamma: number, actions: Int32Array): void {
  for (const policy of [uniformPolicy(model), deterministicPolicy(model, actions)]) {
    const ref = evaluatePolicy(model, reward, policy, { gamma, tol: TIGHT });
    const ev = policyValues(model, reward, policy, { gamma });
    expect(maxDiff(ev.values, ref.values)).toBeLessThanOrEqual(ACCEPT);
  }
}

describe("default exact solver vs the textbook solvers on random models (fast-check)", () => {
  it("discounted (gamma 0.3..0.99), stochastic and deterministic, self-loops, unreachable states", () => {
    fc.assert(
      fc.property(randomMdp({ states: [1, 40], actions: [1, 4], gamma: [0.3, 0.99], rewardRange: 3 }), ({ model, reward, gamma }) => {
        const policy = checkOptimal(model, reward, gamma);
        checkEvaluation(model, reward, gamma, policy);
      }),
      { numRuns: 120 },
    );
  });

  it("episodic gamma = 1 where every policy ends (stochastic and deterministic)", () => {
    fc.assert(
      fc.property(
        fc.boolean().chain((det) => properEpisodic([1, 30], det)),
        ({ model, reward }) => {
          const policy = checkOptimal(model, reward, 1);
          checkEvaluation(model, reward, 1, policy);
        },
      ),
      { numRuns: 80 },
    );
  });

  it("exact ties (every action duplicated): the lower copy wins in every live state, discounted and episodic", () => {
    const discounted = randomMdp({ states: [1, 20], actions: [1, 3], gamma: [0.5, 0.97] });
    const episodic = fc.boolean().chain((det) => properEpisodic([1, 20], det)).map((m) => ({ ...m, gamma: 1 }));
    fc.assert(
      fc.property(fc.oneof(discounted, episodic), ({ model, reward, gamma }) => {
        const d = doubled(model, reward);
        const policy = checkOptimal(d.model, d.reward, gamma);
        for (let s = 0; s < d.model.nStates; s++) if (!d.model.terminal[s]) expect(policy[s]).toBeLessThan(model.nActions);
      }),
      { numRuns: 100 },
    );
  });
});
