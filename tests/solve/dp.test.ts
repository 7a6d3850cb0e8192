/**
 * Exact solvers (src/solve/: value-iteration.ts, policy-iteration.ts, evaluation.ts) against textbook worked examples. Models are built here with
 * ModelBuilder; reference values are from /work/shared/reference/REFERENCE_VALUES.md (section named
 * beside each check).
 */
import { describe, expect, it } from "vitest";
import { ModelBuilder } from "../../src/model/builder.js";
import type { FiniteModel } from "../../src/model/types.js";
import { evaluatePolicy } from "../../src/solve/evaluation.js";
import { uniformPolicy } from "../../src/solve/policy.js";
import { policyIteration } from "../../src/solve/policy-iteration.js";
import { actionValues, greedyActions } from "../../src/solve/sweeps.js";
import { sweepPlan, valueIteration, valueSweeps } from "../../src/solve/value-iteration.js";

/** A model whose single feature "r" is the reward, so `model.featureValues` is the per-outcome reward. */
interface Built {
  model: FiniteModel;
  reward: Float64Array;
}
function finish(b: ModelBuilder): Built {
  const model = b.build();
  return { model, reward: Float64Array.from(model.featureValues) };
}

/** Deterministic grid: `move(r, c, a)` gives the landing cell and the reward, or null for "no outcome". */
function gridModel(
  rows: number,
  cols: number,
  actions: string[],
  opts: { terminal: (r: number, c: number) => boolean; start: [number, number]; gamma?: number },
  move: (r: number, c: number, a: number) => { r: number; c: number; reward: number },
): Built {
  const b = new ModelBuilder({ name: "grid", nStates: rows * cols, actions, features: ["r"], gamma: opts.gamma ?? 1, horizon: 1000 });
  for (let r = 0; r < rows; r++) {
    for (let c = 0; c < cols; c++) {
      const s = r * cols + c;
      if (opts.terminal(r, c)) {
        b.setTerminal(s);
        continue;
      }
      for (let a = 0; a < actions.length; a++) {
        const m = move(r, c, a);
        b.addOutcome(s, a, m.r * cols + m.c, 1, [m.reward]);
      }
    }
  }
  b.setStart(opts.start[0] * cols + opts.start[1], 1);
  return finish(b);
}

const clamp = (x: number, lo: number, hi: number) => Math.max(lo, Math.min(hi, x));
const UDLR: [number, number][] = [
  [-1, 0],
  [1, 0],
  [0, -1],
  [0, 1],
];

/** Sutton & Barto 2018, Example 4.1: 4x4, terminal corners (0,0) and (3,3), reward -1, gamma 1. */
function example41(): Built {
  return gridModel(4, 4, ["up", "down", "left", "right"], { terminal: (r, c) => (r === 0 && c === 0) || (r === 3 && c === 3), start: [1, 1] }, (r, c, a) => ({
    r: clamp(r + UDLR[a][0], 0, 3),
    c: clamp(c + UDLR[a][1], 0, 3),
    reward: -1,
  }));
}

const rows = (v: Float64Array, cols: number) => Array.from({ length: v.length / cols }, (_, i) => Array.from(v.slice(i * cols, (i + 1) * cols)));

describe("Sutton & Barto 2018, Example 4.1 (4x4 gridworld, equiprobable policy)", () => {
  const { model, reward } = example41();
  const pi = uniformPolicy(model);

  it("v_k after k = 1, 2, 3, 10 synchronous sweeps from v_0 = 0 (REFERENCE_VALUES 1.1, Figure 4.1)", () => {
    // Sutton & Barto 2018, Figure 4.1 (exact values as printed by the ShangtongZhang notebook)
    const expected: Record<number, number[]> = {
      1: [0, -1, -1, -1, -1, -1, -1, -1, -1, -1, -1, -1, -1, -1, -1, 0],
      2: [0, -1.75, -2, -2, -1.75, -2, -2, -2, -2, -2, -2, -1.75, -2, -2, -1.75, 0],
      3: [0, -2.4375, -2.9375, -3, -2.4375, -2.875, -3, -2.9375, -2.9375, -3, -2.875, -2.4375, -3, -2.9375, -2.4375, 0],
      10: [
        0, -6.13796997, -8.35235596, -8.96731567, -6.13796997, -7.73739624, -8.42782593, -8.35235596, -8.35235596, -8.42782593, -7.73739624,
        -6.13796997, -8.96731567, -8.35235596, -6.13796997, 0,
      ],
    };
    for (const k of [1, 2, 3, 10]) {
      const ev = evaluatePolicy(model, reward, pi, { maxIters: k, tol: 0 });
      expect(ev.iters).toBe(k);
      expected[k].forEach((v, s) => expect(ev.values[s]).toBeCloseTo(v, 7));
    }
  });

  it("v_pi = negated expected steps to termination (REFERENCE_VALUES 1.1, Figure 4.1 k = infinity)", () => {
    // Sutton & Barto 2018, Example 4.1 / Figure 4.1
    const ev = evaluatePolicy(model, reward, pi, { tol: 1e-12 });
    expect(ev.converged).toBe(true);
    expect(rows(ev.values, 4).flat().map((x) => Math.round(x * 1e6) / 1e6)).toEqual([0, -14, -20, -22, -14, -18, -20, -20, -20, -20, -18, -14, -22, -20, -14, 0]);
  });

  it("sweep counts to max|delta| < 1e-4: 173 synchronous, 114 in place row-major (REFERENCE_VALUES 1.1, computed)", () => {
    // REFERENCE_VALUES.md 1.1 "Sweep counts" (computed; counts the stopping sweep)
    expect(evaluatePolicy(model, reward, pi, { tol: 1e-4 }).iters).toBe(173);
    expect(evaluatePolicy(model, reward, pi, { tol: 1e-4, inPlace: true }).iters).toBe(114);
  });

  it("q_pi(11, down) = -1 and q_pi(7, down) = -15 (REFERENCE_VALUES 1.1, Exercise 4.1, computed)", () => {
    // Sutton & Barto 2018, Exercise 4.1; book states are numbered 1..14 row-major, so book s = our index.
    const v = evaluatePolicy(model, reward, pi, { tol: 1e-12 }).values;
    const q = actionValues(model, reward, v, 1);
    const down = 1;
    expect(q[11 * 4 + down]).toBeCloseTo(-1, 8);
    expect(q[7 * 4 + down]).toBeCloseTo(-15, 8);
  });

  it("v* = -(steps to the nearest terminal) by value iteration and policy iteration", () => {
    // Sutton & Barto 2018, Example 4.1 / Figure 4.1: the greedy policy is optimal, v* = -(shortest distance)
    const vstar = [0, -1, -2, -3, -1, -2, -3, -2, -2, -3, -2, -1, -3, -2, -1, 0];
    const vi = valueIteration(model, reward);
    expect(vi.converged).toBe(true);
    expect(Array.from(vi.values)).toEqual(vstar);
    // Policy iteration starts from "always up", which never terminates from the top row (gamma = 1):
    // cap the evaluation so the improper start policy is evaluated to a large negative value.
    const pi2 = policyIteration(model, reward, { maxIters: 2000 });
    expect(pi2.converged).toBe(true);
    vstar.forEach((v, s) => expect(pi2.values[s]).toBeCloseTo(v, 9));
    // Every greedy action moves one step closer: q*(s, pi(s)) = v*(s).
    for (let s = 0; s < 16; s++) if (!model.terminal[s]) expect(vi.q[s * 4 + vi.policy[s]]).toBe(vstar[s]);
  });

  it("the greedy policy w.r.t. v_3 is already optimal (REFERENCE_VALUES 1.1, Figure 4.1 annotation)", () => {
    // Sutton & Barto 2018, Figure 4.1: greedy policy optimal from k = 3 on
    const v3 = evaluatePolicy(model, reward, pi, { maxIters: 3, tol: 0 }).values;
    const greedy = greedyActions(model, actionValues(model, reward, v3, 1));
    const vi = valueIteration(model, reward);
    for (let s = 0; s < 16; s++) {
      if (model.terminal[s]) continue;
      expect(vi.q[s * 4 + greedy[s]]).toBe(vi.values[s]);
    }
    // ...but not at k = 1, where every action ties and "up" is chosen everywhere (e.g. state 4 -> 0 is optimal, state 7 is not).
    const v1 = evaluatePolicy(model, reward, pi, { maxIters: 1, tol: 0 }).values;
    const g1 = greedyActions(model, actionValues(model, reward, v1, 1));
    expect(vi.q[7 * 4 + g1[7]]).toBeLessThan(vi.values[7]);
  });
});

/**
 * Sutton & Barto 2018, Example 4.3. States 0..100 (0 and 100 terminal); action a = stake, a in 0..50.
 * Stakes above min(s, 100-s) are not legal; they are modelled as the largest legal stake so they add
 * no new choice. Reward +1 on reaching 100, gamma 1.
 */
function gamblerModel(ph: number): Built {
  const nA = 51;
  const b = new ModelBuilder({ name: "gambler", nStates: 101, actions: Array.from({ length: nA }, (_, a) => `stake${a}`), features: ["r"], gamma: 1, horizon: 10_000 });
  b.setTerminal(0).setTerminal(100).setStart(50, 1);
  for (let s = 1; s < 100; s++) {
    for (let a = 0; a < nA; a++) {
      const stake = Math.min(a, s, 100 - s);
      if (stake === 0) {
        b.addOutcome(s, a, s, 1, [0]);
        continue;
      }
      b.addOutcome(s, a, s + stake, ph, [s + stake === 100 ? 1 : 0]);
      b.addOutcome(s, a, s - stake, 1 - ph, [0]);
    }
  }
  return finish(b);
}

describe("Sutton & Barto 2018, Example 4.3 (gambler's problem, p_h = 0.4)", () => {
  const { model, reward } = gamblerModel(0.4);
  const table: [number, number][] = [
    [1, 0.0020656248],
    [2, 0.0051640619],
    [5, 0.017385399],
    [10, 0.0434634975],
    [12, 0.0576591942],
    [13, 0.0652393749],
    [20, 0.1086587436],
    [25, 0.16],
    [30, 0.1860780985],
    [40, 0.2716468591],
    [45, 0.3229881154],
    [50, 0.4],
    [51, 0.4030984372],
    [55, 0.4260780985],
    [60, 0.4651952462],
    [62, 0.4864887913],
    [70, 0.5629881154],
    [75, 0.64],
    [80, 0.6791171477],
    [87, 0.7697331869],
    [90, 0.8074702886],
    [95, 0.8844821732],
    [99, 0.9643329672],
  ];

  it("v* by value iteration matches the table within 1e-9 (REFERENCE_VALUES 1.4, computed)", () => {
    // Sutton & Barto 2018, Example 4.3 / Figure 4.3; values from REFERENCE_VALUES.md 1.4
    const vi = valueIteration(model, reward, { tol: 1e-14 });
    expect(vi.converged).toBe(true);
    for (const [s, v] of table) expect(Math.abs(vi.values[s] - v)).toBeLessThan(1e-9);
    // exact checks: v*(50) = p, v*(25) = p^2, v*(75) = p + (1 - p) p
    expect(vi.values[50]).toBeCloseTo(0.4, 12);
    expect(vi.values[25]).toBeCloseTo(0.16, 12);
    expect(vi.values[75]).toBeCloseTo(0.64, 12);
  });

  it("policy iteration reaches the same v* (value function, not a particular argmax)", () => {
    // Sutton & Barto 2018, Example 4.3: the optimal policy is not unique, v* is
    const pi = policyIteration(model, reward, { tol: 1e-14 });
    expect(pi.converged).toBe(true);
    for (const [s, v] of table) expect(Math.abs(pi.values[s] - v)).toBeLessThan(1e-9);
  });
});

describe("Sutton & Barto 2018, Example 6.6 (cliff walking), v* undiscounted", () => {
  // 4 x 12, start (3,0), goal (3,11); stepping into (3,1..10) gives -100 and returns to the start (not terminal).
  // Cliff cells themselves are never occupied; they are modelled as (unreachable) terminal states.
  const isCliff = (r: number, c: number) => r === 3 && c >= 1 && c <= 10;
  const { model, reward } = gridModel(
    4,
    12,
    ["up", "down", "left", "right"],
    { terminal: (r, c) => (r === 3 && c === 11) || isCliff(r, c), start: [3, 0] },
    (r, c, a) => {
      const nr = clamp(r + UDLR[a][0], 0, 3);
      const nc = clamp(c + UDLR[a][1], 0, 11);
      return isCliff(nr, nc) ? { r: 3, c: 0, reward: -100 } : { r: nr, c: nc, reward: -1 };
    },
  );

  it("v* by row (REFERENCE_VALUES 1.3, computed)", () => {
    // Sutton & Barto 2018, Example 6.6; optimal path up, 11 x right, down = 13 steps
    const vi = valueIteration(model, reward);
    expect(vi.converged).toBe(true);
    const v = rows(vi.values, 12);
    expect(v[0]).toEqual([-14, -13, -12, -11, -10, -9, -8, -7, -6, -5, -4, -3]);
    expect(v[1]).toEqual([-13, -12, -11, -10, -9, -8, -7, -6, -5, -4, -3, -2]);
    expect(v[2]).toEqual([-12, -11, -10, -9, -8, -7, -6, -5, -4, -3, -2, -1]);
    expect(v[3][0]).toBe(-13);
    expect(v[3][11]).toBe(0);
    // From the start the optimal first move is up (stepping right drops into the cliff).
    expect(vi.policy[36]).toBe(0);
  });
});

describe("Sutton & Barto 2018, Example 6.5 (windy gridworld)", () => {
  const wind = [0, 0, 0, 1, 1, 1, 2, 2, 1, 0];
  const KING: [number, number][] = [
    [-1, 0],
    [1, 0],
    [0, -1],
    [0, 1],
    [-1, -1],
    [-1, 1],
    [1, -1],
    [1, 1],
  ];
  function windy(moves: [number, number][]): Built {
    return gridModel(
      7,
      10,
      moves.map((m) => `${m[0]},${m[1]}`),
      { terminal: (r, c) => r === 3 && c === 7, start: [3, 0] },
      (r, c, a) => ({ r: clamp(r + moves[a][0] - wind[c], 0, 6), c: clamp(c + moves[a][1], 0, 9), reward: -1 }),
    );
  }

  it("minimum episode length 15 (REFERENCE_VALUES 1.2, confirmed in the book text)", () => {
    // Sutton & Barto 2018, Example 6.5: "two more than the minimum of 15"
    const { model, reward } = windy(UDLR);
    const vi = valueIteration(model, reward);
    expect(vi.values[3 * 10 + 0]).toBe(-15);
  });

  it("wind check: one cell right of the goal, 'left' lands just above the goal (REFERENCE_VALUES 1.2)", () => {
    // Sutton & Barto 2018, Example 6.5 geometry (wind of the column the agent is in)
    const { model } = windy(UDLR);
    const s = 3 * 10 + 8;
    expect(model.next[model.saStart[s * 4 + 2]]).toBe(2 * 10 + 7);
  });

  it("king's moves: minimum 7; adding 'stay' does not shorten it (REFERENCE_VALUES 1.2, Exercise 6.9, computed)", () => {
    // Sutton & Barto 2018, Exercise 6.9 (computed in REFERENCE_VALUES.md)
    expect(valueIteration(windy(KING).model, windy(KING).reward).values[30]).toBe(-7);
    const withStay = windy([...KING, [0, 0]]);
    expect(valueIteration(withStay.model, withStay.reward).values[30]).toBe(-7);
  });
});

describe("valueSweeps is the sweep part of valueIteration", () => {
  it("with a plan built beforehand (and reused), synchronous and in place, it reaches the textbook v*", () => {
    // valueIteration itself calls valueSweeps, so comparing the two could not fail; the reference is
    // the book instead. Sutton & Barto 2018, Example 4.1: v* = -(steps to the nearest terminal corner).
    const ex = example41();
    const vstar41 = [0, -1, -2, -3, -1, -2, -3, -2, -2, -3, -2, -1, -3, -2, -1, 0];
    const plan41 = sweepPlan(ex.model, ex.reward);
    // Example 4.3 (stochastic, so the general sweep path): REFERENCE_VALUES.md 1.4 table, within 1e-9.
    const gm = gamblerModel(0.4);
    const planG = sweepPlan(gm.model, gm.reward);
    const gamblerTable: [number, number][] = [
      [1, 0.0020656248],
      [13, 0.0652393749],
      [25, 0.16],
      [50, 0.4],
      [62, 0.4864887913],
      [75, 0.64],
      [99, 0.9643329672],
    ];
    for (const inPlace of [false, true]) {
      // The same plan object serves both modes: a sweep must not alter it.
      const a = valueSweeps(ex.model, ex.reward, { inPlace }, plan41);
      expect(a.converged).toBe(true);
      expect(Array.from(a.values)).toEqual(vstar41);
      const g = valueSweeps(gm.model, gm.reward, { inPlace, tol: 1e-14 }, planG);
      expect(g.converged).toBe(true);
      for (const [s, v] of gamblerTable) expect(Math.abs(g.values[s] - v)).toBeLessThan(1e-9);
    }
    // Example 4.1: the live (non-terminal) states are 1..14; the model is deterministic, the gambler's is not.
    expect(Array.from(plan41.live)).toEqual([1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 13, 14]);
    expect(plan41.liveNext).not.toBeNull();
    expect(planG.liveNext).toBeNull();
  });
});
