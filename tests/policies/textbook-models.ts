/**
 * Test models built with ModelBuilder from their published specifications, plus small helpers to turn
 * a model into a learner-facing TabularEnv and to roll out a greedy policy.
 *
 *  - lavaModel: the shared benchmark grid (bench PROBLEM.md sections 1-3).
 *  - cliffModel: Sutton & Barto 2018, Example 6.6 (REFERENCE_VALUES.md section 1.3).
 *  - windyModel: Sutton & Barto 2018, Example 6.5 (REFERENCE_VALUES.md section 1.2).
 *  - corridorModel: a one-row corridor with a numeric position observation (our own, for tile coding).
 */
import { ModelBuilder } from "../../src/model/builder.js";
import { designerReward } from "../../src/model/reward.js";
import { learnerView, viewEnv, type LearnerView, type TabularEnv } from "../../src/model/learner-view.js";
import type { FiniteModel } from "../../src/model/types.js";
import type { Agent } from "../../policies/driver.js";

/** Learner-facing env over a model whose single feature "reward" is the reward (weight 1). */
export function envOf(model: FiniteModel): TabularEnv & { readonly view: LearnerView } {
  const reward = designerReward(model, { name: "plain", weights: { reward: 1 } });
  return viewEnv(learnerView(model, reward));
}

/** The same env without the `view` property, so learners must take their generic loop. */
export function opaqueEnv(env: TabularEnv): TabularEnv {
  return {
    name: env.name,
    nActions: env.nActions,
    actions: env.actions,
    horizon: env.horizon,
    stateCapacity: () => env.stateCapacity(),
    reset: (rng) => env.reset(rng),
    step: (s, a, rng, out) => env.step(s, a, rng, out),
    obsDim: env.obsDim,
    observe: env.observe ? (s, out) => env.observe!(s, out) : undefined,
  };
}

/** Bench PROBLEM.md sections 1-3: start (0,0), goal (W-1,H-1), lava row floor(H/2) at x = 0..W-3. */
export function lavaModel(W: number, H: number): FiniteModel {
  const S = W * H;
  const hy = Math.floor(H / 2);
  const kind = new Uint8Array(S); // 0 ordinary, 1 goal, 2 lava
  for (let x = 0; x <= W - 3; x++) kind[hy * W + x] = 2;
  kind[S - 1] = 1;
  const b = new ModelBuilder({
    name: `lava-${W}x${H}`,
    nStates: S,
    actions: ["up", "right", "down", "left"],
    features: ["reward"],
    gamma: 0.99,
    horizon: 4 * (W + H),
  });
  for (let y = 0; y < H; y++) {
    for (let x = 0; x < W; x++) {
      const s = y * W + x;
      if (kind[s] !== 0) {
        b.setTerminal(s);
        continue;
      }
      const succ = [(y > 0 ? y - 1 : y) * W + x, y * W + (x < W - 1 ? x + 1 : x), (y < H - 1 ? y + 1 : y) * W + x, y * W + (x > 0 ? x - 1 : x)];
      for (let a = 0; a < 4; a++) {
        const ns = succ[a];
        const r = kind[ns] === 1 ? 1.0 : kind[ns] === 2 ? -1.0 : -0.01;
        b.addOutcome(s, a, ns, 1, [r]);
      }
    }
  }
  b.setStart(0, 1);
  return b.build();
}

export const lavaKind = (W: number, H: number, s: number): "goal" | "hazard" | "ordinary" =>
  s === W * H - 1 ? "goal" : Math.floor(s / W) === Math.floor(H / 2) && s % W <= W - 3 ? "hazard" : "ordinary";

/** Row-major grid helper: cell (row, col) -> state id. */
export const cell = (cols: number, row: number, col: number): number => row * cols + col;

/**
 * Sutton & Barto 2018, Example 6.6: 4x12, start (3,0), goal (3,11) terminal, cliff (3,1..10): stepping
 * into it gives -100 and sends the agent back to the start (not terminal); -1 on every other step; γ = 1.
 * Actions up, right, down, left; moves off the grid stay put. Cliff cells are never occupied; they get
 * ordinary outcomes only because every non-terminal state needs some.
 */
export function cliffModel(horizon = 1000): FiniteModel {
  const R = 4;
  const C = 12;
  const start = cell(C, 3, 0);
  const goal = cell(C, 3, 11);
  const isCliff = (r: number, c: number) => r === 3 && c >= 1 && c <= 10;
  const b = new ModelBuilder({ name: "cliff-walking", nStates: R * C, actions: ["up", "right", "down", "left"], features: ["reward"], gamma: 1, horizon });
  const moves = [
    [-1, 0],
    [0, 1],
    [1, 0],
    [0, -1],
  ];
  for (let r = 0; r < R; r++) {
    for (let c = 0; c < C; c++) {
      const s = cell(C, r, c);
      if (s === goal) continue;
      for (let a = 0; a < 4; a++) {
        const nr = Math.min(R - 1, Math.max(0, r + moves[a][0]));
        const nc = Math.min(C - 1, Math.max(0, c + moves[a][1]));
        if (isCliff(nr, nc)) b.addOutcome(s, a, start, 1, [-100]);
        else b.addOutcome(s, a, cell(C, nr, nc), 1, [-1]);
      }
    }
  }
  b.setTerminal(goal).setStart(start, 1);
  return b.build();
}

/**
 * Sutton & Barto 2018, Example 6.5: 7x10, start (3,0), goal (3,7) terminal, upward wind per column
 * 0 0 0 1 1 1 2 2 1 0 taken from the column the agent is in, position clipped to the grid, -1 per step,
 * γ = 1. Actions up, down, right, left (the book's order).
 */
export const WIND = [0, 0, 0, 1, 1, 1, 2, 2, 1, 0];
export function windyModel(horizon = 5000): FiniteModel {
  const R = 7;
  const C = 10;
  const goal = cell(C, 3, 7);
  const moves = [
    [-1, 0],
    [1, 0],
    [0, 1],
    [0, -1],
  ];
  const b = new ModelBuilder({ name: "windy-gridworld", nStates: R * C, actions: ["up", "down", "right", "left"], features: ["reward"], gamma: 1, horizon });
  for (let r = 0; r < R; r++) {
    for (let c = 0; c < C; c++) {
      const s = cell(C, r, c);
      if (s === goal) continue;
      for (let a = 0; a < 4; a++) {
        const nr = Math.min(R - 1, Math.max(0, r + moves[a][0] - WIND[c]));
        const nc = Math.min(C - 1, Math.max(0, c + moves[a][1]));
        b.addOutcome(s, a, cell(C, nr, nc), 1, [-1]);
      }
    }
  }
  b.setTerminal(goal).setStart(cell(C, 3, 0), 1);
  return b.build();
}

/** A one-row corridor of n cells, start at 0, goal n-1 terminal, -1 per step; observation = [position]. */
export function corridorModel(n: number, horizon = 500): FiniteModel {
  const b = new ModelBuilder({ name: `corridor-${n}`, nStates: n, actions: ["left", "right"], features: ["reward"], gamma: 1, horizon });
  for (let s = 0; s < n - 1; s++) {
    b.addOutcome(s, 0, Math.max(0, s - 1), 1, [-1]);
    b.addOutcome(s, 1, s + 1, 1, [-1]);
  }
  b.setTerminal(n - 1).setStart(0, 1);
  b.setObservations(["position"], Float64Array.from({ length: n }, (_, s) => s));
  return b.build();
}

/**
 * Follow the agent's greedy action from the model's (single) start state through the model's
 * (deterministic) dynamics until a terminal state or `maxLen` steps. Returns the visited states,
 * start included, and whether a terminal state was reached.
 */
export function greedyRollout(model: FiniteModel, agent: Agent, maxLen = 1000): { states: number[]; reachedTerminal: boolean } {
  let s = model.start.findIndex((p) => p > 0);
  const states = [s];
  for (let i = 0; i < maxLen; i++) {
    const a = agent.greedyAction(s);
    const o = model.saStart[s * model.nActions + a];
    s = model.next[o];
    states.push(s);
    if (model.terminal[s]) return { states, reachedTerminal: true };
  }
  return { states, reachedTerminal: false };
}
