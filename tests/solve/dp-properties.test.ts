/**
 * Invariants of the exact solvers (src/solve/) on random small MDPs (fast-check).
 * Sources: Bellman optimality and the policy improvement theorem (Sutton & Barto 2018, sections 3.6,
 * 4.2-4.4; Puterman 1994, Theorem 6.2.2 "v* >= v_pi for every policy", from memory).
 */
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { evaluatePolicy } from "../../src/solve/evaluation.js";
import { deterministicPolicy } from "../../src/solve/policy.js";
import { policyIteration } from "../../src/solve/policy-iteration.js";
import { valueIteration } from "../../src/solve/value-iteration.js";
import { randomMdp, rebuildModel } from "../helpers/random-mdp.js";

/**
 * Random MDP: 2..6 states (state 0 never terminal), 1..4 actions, 1..3 outcomes per pair; half of
 * them deterministic (first outcome only), so the deterministic fast paths (incl. the unrolled
 * 4-action sweep) are exercised as well as the general one.
 */
const mdpArb = randomMdp({ states: [2, 6], actions: [1, 4], gamma: [0.5, 0.95] });

const TOL = 1e-12;
const close = (a: Float64Array, b: Float64Array, eps: number) => a.every((x, i) => Math.abs(x - b[i]) <= eps);

describe("exact solvers on random finite MDPs", () => {
  it("policy iteration and value iteration agree on v* (Sutton & Barto 2018, sections 4.3-4.4)", () => {
    fc.assert(
      fc.property(mdpArb, ({ model, reward }) => {
        const vi = valueIteration(model, reward, { tol: TOL });
        const pi = policyIteration(model, reward, { tol: TOL });
        expect(vi.converged && pi.converged).toBe(true);
        // Policy iteration switches an action only for a gain above its margin (1e-9 in
        // policy-iteration.ts); a policy no action of which gains more than eps is within
        // eps / (1 - gamma) of v* (the policy improvement bound; Puterman 1994, section 6.4, from
        // memory). A reward below the margin (fast-check found 5e-10 at gamma 0.95) sits right at it.
        expect(close(vi.values, pi.values, 1e-8 + 1e-9 / (1 - model.gamma))).toBe(true);
      }),
      { numRuns: 150 },
    );
  });

  it("v* dominates the value of every sampled deterministic policy (Puterman 1994, Thm 6.2.2, from memory)", () => {
    fc.assert(
      fc.property(mdpArb, fc.array(fc.nat(), { minLength: 6, maxLength: 6 }), ({ model, reward }, choice) => {
        const vstar = valueIteration(model, reward, { tol: TOL }).values;
        const actions = Int32Array.from({ length: model.nStates }, (_, s) => (model.terminal[s] ? -1 : choice[s] % model.nActions));
        const v = evaluatePolicy(model, reward, deterministicPolicy(model, actions), { tol: TOL }).values;
        for (let s = 0; s < model.nStates; s++) expect(v[s]).toBeLessThanOrEqual(vstar[s] + 1e-8);
      }),
      { numRuns: 150 },
    );
  });

  it("evaluating the greedy policy of value iteration gives value iteration's values (Sutton & Barto 2018, section 4.4)", () => {
    fc.assert(
      fc.property(mdpArb, ({ model, reward }) => {
        const vi = valueIteration(model, reward, { tol: TOL });
        const ev = evaluatePolicy(model, reward, deterministicPolicy(model, vi.policy), { tol: TOL });
        expect(close(ev.values, vi.values, 1e-8)).toBe(true);
      }),
      { numRuns: 150 },
    );
  });

  it("in-place (Gauss-Seidel) and synchronous sweeps agree at convergence (Sutton & Barto 2018, section 4.1)", () => {
    fc.assert(
      fc.property(mdpArb, ({ model, reward }) => {
        const sync = valueIteration(model, reward, { tol: TOL });
        const inPlace = valueIteration(model, reward, { tol: TOL, inPlace: true });
        expect(close(sync.values, inPlace.values, 1e-8)).toBe(true);
        const uniform = new Float64Array(model.nStates * model.nActions).fill(1 / model.nActions);
        const e1 = evaluatePolicy(model, reward, uniform, { tol: TOL });
        const e2 = evaluatePolicy(model, reward, uniform, { tol: TOL, inPlace: true });
        expect(close(e1.values, e2.values, 1e-8)).toBe(true);
      }),
      { numRuns: 150 },
    );
  });

  it("the deterministic fast path equals the general path (same model with each outcome split in two halves)", () => {
    // Splitting an outcome p into p/2 + p/2 to the same next state leaves the MDP unchanged
    // (Sutton & Barto 2018, eq. 3.2: p(s', r | s, a) is all that matters).
    fc.assert(
      fc.property(mdpArb, ({ model, reward, gamma }) => {
        const split = rebuildModel(model, { name: "split", gamma }, (b, s, a, k) => {
          for (let o = model.saStart[k]; o < model.saStart[k + 1]; o++) {
            b.addOutcome(s, a, model.next[o], model.prob[o] / 2, [reward[o]]);
            b.addOutcome(s, a, model.next[o], model.prob[o] / 2, [reward[o]]);
          }
        });
        const v1 = valueIteration(model, reward, { tol: TOL }).values;
        const v2 = valueIteration(split, Float64Array.from(split.featureValues), { tol: TOL }).values;
        expect(close(v1, v2, 1e-8)).toBe(true);
      }),
      { numRuns: 100 },
    );
  });
});
