/**
 * `evaluateOnStates` (src/solve/engine/evaluate.ts): after a deterministic policy changes its action in
 * some states, re-solving only the states that reach a changed state under the new policy (values of
 * every other state held) gives the new policy's values. Checked against the textbook iterative policy
 * evaluation of the new policy run to a tight tolerance (Sutton & Barto 2018, section 4.1) on random
 * models (fast-check), within 1e-8 in the max norm.
 */
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import type { FiniteModel } from "../../src/model/types.js";
import { evaluateOnStates } from "../../src/solve/engine/index.js";
import { deterministicPolicy, evaluatePolicy, expectedReward } from "../../src/solve/index.js";
import { randomMdp } from "../helpers/random-mdp.js";

const maxDiff = (a: Float64Array, b: Float64Array) => a.reduce((m, x, i) => Math.max(m, Math.abs(x - b[i])), 0);

function actionsFrom(model: FiniteModel, choice: number[]): Int32Array {
  return Int32Array.from({ length: model.nStates }, (_, s) => (model.terminal[s] ? -1 : choice[s % choice.length] % model.nActions));
}

/** Live states that reach a state of `changed` under `actions` (changed ones included), by repeated scans. */
function upstream(model: FiniteModel, actions: Int32Array, changed: Set<number>): Int32Array {
  const inSet = new Uint8Array(model.nStates);
  for (const s of changed) inSet[s] = 1;
  for (let grew = true; grew; ) {
    grew = false;
    for (let s = 0; s < model.nStates; s++) {
      if (inSet[s] || model.terminal[s]) continue;
      const k = s * model.nActions + actions[s];
      for (let o = model.saStart[k]; o < model.saStart[k + 1]; o++)
        if (model.prob[o] > 0 && inSet[model.next[o]]) {
          inSet[s] = 1;
          grew = true;
        }
    }
  }
  return Int32Array.from({ length: model.nStates }, (_, s) => s).filter((s) => inSet[s] === 1);
}

describe("engine: re-solving the upstream states of a policy change (fast-check)", () => {
  it("gives the new policy's values (random models, gamma 0.3..0.99)", () => {
    const choice = fc.array(fc.nat(), { minLength: 1, maxLength: 8 });
    fc.assert(
      fc.property(randomMdp({ states: [1, 30], actions: [1, 4], gamma: [0.3, 0.99], rewardRange: 3 }), choice, choice, ({ model, reward, gamma }, c1, c2) => {
        const a1 = actionsFrom(model, c1);
        const a2 = actionsFrom(model, c2);
        const x = evaluatePolicy(model, reward, deterministicPolicy(model, a1), { gamma, tol: 1e-13 }).values.slice();
        const changed = new Set<number>();
        for (let s = 0; s < model.nStates; s++) if (a1[s] !== a2[s]) changed.add(s);
        const scratch = new Int32Array(model.nStates).fill(-1);
        evaluateOnStates(model, a2, upstream(model, a2, changed), [expectedReward(model, reward)], [x], { gamma, accuracy: 1e-12 }, scratch);
        expect(scratch.every((v) => v === -1)).toBe(true);
        const ref = evaluatePolicy(model, reward, deterministicPolicy(model, a2), { gamma, tol: 1e-13 }).values;
        expect(maxDiff(x, ref)).toBeLessThanOrEqual(1e-8);
      }),
      { numRuns: 150 },
    );
  });
});
