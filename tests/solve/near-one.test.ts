/**
 * Discounts close to 1 and equal to 1 in `solveVariant` (src/solve/compare.ts, src/solve/exact.ts):
 * exact values by policy iteration over linear solves, where value iteration would need ~1/(1-gamma)
 * sweeps; a clear InputError when gamma = 1 and a loop pays forever.
 */
import { describe, expect, it } from "vitest";
import { runSolve } from "../../src/app/solve.js";
import { builtinScenarioNames, loadScenario, resolveReward } from "../../src/env/index.js";
import { ModelBuilder } from "../../src/model/builder.js";
import { designerReward } from "../../src/model/reward.js";
import type { FiniteModel, RewardVariant } from "../../src/model/types.js";
import { solveVariant } from "../../src/solve/compare.js";
import { exactPolicyIteration } from "../../src/solve/exact.js";
import { actionValues, valueIteration } from "../../src/solve/index.js";
import { catchInputError } from "../helpers/input-error.js";

const NEAR_ONE = 0.9999999;
const maxDiff = (a: Float64Array, b: Float64Array) => a.reduce((m, x, i) => Math.max(m, Math.abs(x - b[i])), 0);
const plain: RewardVariant = { name: "plain", weights: { r: 1 } };

/** One live state: "stay" pays `stay` and loops with probability 1, "quit" pays `quit` and ends. */
function stayOrQuit(stay: number, quit: number, gamma: number): FiniteModel {
  const b = new ModelBuilder({ name: "stay-or-quit", nStates: 2, actions: ["stay", "quit"], features: ["r"], gamma, horizon: 100 });
  b.setTerminal(1).setStart(0, 1);
  b.addOutcome(0, 0, 0, 1, [stay]);
  b.addOutcome(0, 1, 1, 1, [quit]);
  return b.build();
}

function builtin(name: string) {
  const model = loadScenario(name).model;
  const variant = resolveReward(model, undefined);
  return { model, variant };
}

describe("solve near gamma = 1", () => {
  it("a state that pays 1 forever is worth 1 / (1 - gamma) = 1e7 at gamma 0.9999999", () => {
    // Geometric series: sum_t gamma^t = 1 / (1 - gamma) (any calculus text); staying beats quitting (5).
    const model = stayOrQuit(1, 5, NEAR_ONE);
    const r = solveVariant(model, plain);
    expect(r.converged).toBe(true);
    expect(r.designerOptimal.policy[0]).toBe(0);
    expect(Math.abs(r.designerOptimal.designer - 1 / (1 - NEAR_ONE)) / 1e7).toBeLessThan(1e-9);
    // Uniform random: v = 0.5 (1 + gamma v) + 0.5 * 5  =>  v = 3 / (1 - gamma / 2) (same series argument).
    expect(r.random.designer).toBeCloseTo(3 / (1 - NEAR_ONE / 2), 8);
  });

  it("policy iteration with linear solves matches value iteration (tol 1e-13) within 1e-8 on every built-in at its own gamma", () => {
    for (const name of builtinScenarioNames()) {
      const { model, variant } = builtin(name);
      for (const reward of [designerReward(model, variant, model.gamma), model.intent]) {
        const ref = valueIteration(model, reward, { tol: 1e-13 });
        expect(ref.converged).toBe(true);
        const ex = exactPolicyIteration(model, reward, model.gamma);
        if (ex.improper) throw new Error("improper at gamma < 1");
        expect(ex.converged).toBe(true);
        expect(maxDiff(ex.values, ref.values), name).toBeLessThanOrEqual(1e-8);
      }
    }
  });

  it("every built-in solves at gamma 0.9999999 to values that satisfy the Bellman optimality equation", () => {
    for (const name of builtinScenarioNames()) {
      const { model, variant } = builtin(name);
      const r = solveVariant(model, variant, { gamma: NEAR_ONE });
      expect(r.converged, name).toBe(true);
      const rd = designerReward(model, variant, NEAR_ONE);
      for (const [V, reward] of [[r.designerOptimal.values, rd], [r.intentOptimal.values, model.intent]] as const) {
        // V* = max_a Q(V*) (Sutton & Barto 2018, eq. 4.1): residual at rounding level relative to |V|.
        const q = actionValues(model, reward, V, NEAR_ONE);
        const scale = 1 + V.reduce((m, x) => Math.max(m, Math.abs(x)), 0);
        for (let s = 0; s < model.nStates; s++) {
          if (model.terminal[s]) continue;
          let best = -Infinity;
          for (let a = 0; a < model.nActions; a++) best = Math.max(best, q[s * model.nActions + a]);
          expect(Math.abs(best - V[s]) / scale, `${name} state ${s}`).toBeLessThan(1e-9);
        }
      }
    }
  });
});

describe("solve at gamma = 1", () => {
  it("a loop that pays forever is a solve.unbounded InputError naming the discount", () => {
    const e = catchInputError(() => solveVariant(stayOrQuit(1, 5, 1), plain));
    expect(e.code).toBe("solve.unbounded");
    expect(e.message).toContain("gamma 1");
    expect(e.message).toMatch(/loops 0 -> 0|loops s0 -> s0|loops \S+ -> \S+/);
  });

  it("the built-in circuit scenario (assay-carousel) at gamma 1 is unbounded, not a large number", () => {
    const { model, variant } = builtin("assay-carousel");
    expect(catchInputError(() => solveVariant(model, variant, { gamma: 1 })).code).toBe("solve.unbounded");
  });

  it("a loop that costs is fine at gamma 1: quitting at 5 beats paying -1 per step", () => {
    const r = solveVariant(stayOrQuit(-1, 5, 1), plain);
    expect(r.designerOptimal.policy[0]).toBe(1);
    expect(r.designerOptimal.designer).toBe(5);
  });

  it("a sweep cap too small for value iteration is a solve.notConverged InputError, not silent values", async () => {
    const err = await runSolve({ env: "quench-hall-run", maxIters: 3 }).then(
      () => null,
      (e: unknown) => e,
    );
    expect(err).toMatchObject({ code: "solve.notConverged" });
    expect(String((err as Error).message)).toContain("--max-iters");
  });
});
