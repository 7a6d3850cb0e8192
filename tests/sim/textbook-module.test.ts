// A simulator module of a textbook gridworld compiles, solves and trains to the published values.
import { execSync } from "node:child_process";
import { existsSync } from "node:fs";
import { beforeAll, describe, expect, it } from "vitest";
import { trainQLearning } from "../../policies/qlearning.js";
import { designerReward } from "../../src/model/reward.js";
import { createRng } from "../../src/rng/rng.js";
import { evaluatePolicy } from "../../src/solve/evaluation.js";
import { uniformPolicy } from "../../src/solve/policy.js";
import { valueIteration } from "../../src/solve/value-iteration.js";
import { moduleTabularEnv } from "../../src/sim/env.js";
import { loadModuleEnv } from "../../src/env/resolve.js";
import type { SimulatorHandle } from "../../src/sim/load.js";
import type { EnvDefinition } from "../../src/sim/define.js";

const FILE = "examples/textbook-4x4.ts";
beforeAll(() => {
  if (!existsSync("dist/src/index.js")) execSync("npx tsc -p tsconfig.json", { stdio: "ignore" });
});

// Sutton & Barto 2018, Example 4.1 / Figure 4.1: v_pi of the equiprobable random policy, rows top to bottom
// (REFERENCE_VALUES.md 1.1, confirmed).
const V_PI = [0, -14, -20, -22, -14, -18, -20, -20, -20, -20, -18, -14, -22, -20, -14, 0];
// v*: the negated length of the shortest path to the nearer terminal corner (computed here independently
// as the Manhattan distance, since moves are deterministic 4-neighbour steps and there are no walls).
const V_STAR = Array.from({ length: 16 }, (_, c) => {
  const r = Math.floor(c / 4);
  const col = c % 4;
  return -Math.min(r + col, 3 - r + (3 - col));
});

describe("examples/textbook-4x4.ts (Sutton & Barto 2018, Example 4.1)", () => {
  it("compiles to the 16-cell model, evaluates v_pi exactly and solves v*", async () => {
    const env = await loadModuleEnv(FILE);
    const m = env.model!;
    expect(m.nStates).toBe(16);
    const byCell = (v: Float64Array) => Array.from({ length: 16 }, (_, c) => v[m.stateLabels.indexOf(String(c))]);
    const reward = designerReward(m, m.variants!.default);
    const pi = evaluatePolicy(m, reward, uniformPolicy(m), { tol: 1e-12 });
    byCell(pi.values).forEach((v, c) => expect(v).toBeCloseTo(V_PI[c], 8));
    const star = valueIteration(m, reward, { tol: 1e-12 });
    expect(byCell(star.values)).toEqual(V_STAR.map((v) => (v === 0 ? 0 : v)));
  });

  it("tabular Q-learning on the module (moduleTabularEnv) reaches an optimal greedy policy", async () => {
    const env = await loadModuleEnv(FILE);
    const m = env.model!;
    const def = (env.simulator as SimulatorHandle).def as EnvDefinition<{ cell: number }>;
    const tab = moduleTabularEnv(def, { step: -1 }, FILE);
    const { agent } = trainQLearning(tab, { alpha: 0.5, gamma: 1, epsilon: 0.2 }, { steps: 60_000, rng: createRng(2018) });
    const star = valueIteration(m, designerReward(m, m.variants!.default), { tol: 1e-12 });
    for (let c = 1; c < 15; c++) {
      const s = m.stateLabels.indexOf(String(c));
      const a = agent.greedyAction(tab.idOf({ cell: c }));
      // The learner's action is one of the optimal ones: q*(s, a) = v*(s).
      expect(star.q[s * m.nActions + a]).toBeCloseTo(star.values[s], 9);
    }
  });
});
