import { readFileSync } from "node:fs";
import { dirname, join } from "node:path";
import { fileURLToPath } from "node:url";
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { formatError, InputError } from "../../src/errors.js";
import { ModelBuilder } from "../../src/model/builder.js";
import { exportModel, formatModelDocument } from "../../src/model/format/export.js";
import { didYouMean, jsonPath, lineColumn, locateJsonError } from "../../src/model/format/json-errors.js";
import { loadModelFile, parseModelFile } from "../../src/model/format/model-file.js";
import { parseRewardFile } from "../../src/model/format/reward-file.js";
import { DEFAULT_HORIZON, type ModelDocument } from "../../src/model/format/schema.js";
import { designerReward } from "../../src/model/reward.js";
import type { FiniteModel, RewardVariant } from "../../src/model/types.js";
import { randomModel } from "../helpers/random-model.js";
import { evaluatePolicy } from "../../src/solve/evaluation.js";
import { deterministicPolicy, uniformPolicy } from "../../src/solve/policy.js";
import { actionValues } from "../../src/solve/sweeps.js";
import { valueIteration } from "../../src/solve/value-iteration.js";

const here = dirname(fileURLToPath(import.meta.url));
const fixtures = join(here, "..", "fixtures");
const modelFixture = (name: string) => join(fixtures, "models", name);

/** Run `fn`, expect an InputError, and return it with its one-line rendering. */
function inputError(fn: () => unknown): { err: InputError; line: string } {
  let caught: unknown;
  try {
    fn();
  } catch (e) {
    caught = e;
  }
  expect(caught, "expected an InputError").toBeInstanceOf(InputError);
  const err = caught as InputError;
  expect(err.exitCode).toBe(2);
  const line = formatError(err);
  expect(line).not.toMatch(/\n/);
  return { err, line };
}

/** Element-wise === (so -0 equals 0), reporting the first mismatch. */
function expectSameArray(actual: ArrayLike<number>, expected: ArrayLike<number>, what: string): void {
  expect(actual.length, `${what}: length`).toBe(expected.length);
  for (let i = 0; i < expected.length; i++) {
    if (actual[i] !== expected[i]) expect(actual[i], `${what}[${i}]`).toBe(expected[i]);
  }
}

// -------------------------------------------------------------------------------------------------
// Sutton & Barto 2018, Example 4.1 (4x4 gridworld), from the hand-written model file

describe("Sutton & Barto 2018, Example 4.1, as a model file", () => {
  const file = modelFixture("sb-4x4.json");
  const m = loadModelFile(file);
  const r = designerReward(m, m.variants!.default);
  const pi = uniformPolicy(m);
  // Cells in row-major order; both shaded corners are the one terminal state 0 (as in the book).
  const stateOfCell = (c: number) => (c === 0 || c === 15 ? 0 : c);
  const grid = (v: Float64Array) => Array.from({ length: 16 }, (_, c) => v[stateOfCell(c)]);
  const after = (k: number) => grid(evaluatePolicy(m, r, pi, { maxIters: k, tol: 0 }).values);
  const vPi = evaluatePolicy(m, r, pi, { tol: 1e-13 });
  const cornerDistance = (c: number) => Math.min(Math.floor(c / 4) + (c % 4), 3 - Math.floor(c / 4) + (3 - (c % 4)));

  it("loads as 15 states (one terminal), 4 actions, reward -1 per step, gamma 1", () => {
    expect(m.nStates).toBe(15);
    expect(m.actions).toEqual(["up", "down", "left", "right"]);
    expect(m.gamma).toBe(1);
    expect(Array.from(m.terminal)).toEqual([1, ...new Array(14).fill(0)]);
    expect(m.horizon).toBe(1000);
    // Every non-terminal transition has designer reward -1 (Sutton & Barto 2018, Example 4.1: "reward is -1 on all transitions").
    for (let s = 1; s < 15; s++) for (let k = s * 4; k < s * 4 + 4; k++) expect(r[m.saStart[k]]).toBe(-1);
  });

  it("v_1, v_2, v_3 are exactly the printed iterates", () => {
    // Sutton & Barto 2018, Figure 4.1 / REFERENCE_VALUES.md section 1.1 (exact values).
    expect(after(1)).toEqual([0, -1, -1, -1, -1, -1, -1, -1, -1, -1, -1, -1, -1, -1, -1, 0]);
    expect(after(2)).toEqual([0, -1.75, -2, -2, -1.75, -2, -2, -2, -2, -2, -2, -1.75, -2, -2, -1.75, 0]);
    expect(after(3)).toEqual([
      0, -2.4375, -2.9375, -3, -2.4375, -2.875, -3, -2.9375, -2.9375, -3, -2.875, -2.4375, -3, -2.9375, -2.4375, 0,
    ]);
  });

  it("v_10 matches to the 8 printed decimals", () => {
    // Sutton & Barto 2018, Figure 4.1, k = 10 / REFERENCE_VALUES.md section 1.1 (8 decimals).
    const ref = [
      0, -6.13796997, -8.35235596, -8.96731567, -6.13796997, -7.73739624, -8.42782593, -8.35235596, -8.35235596, -8.42782593, -7.73739624,
      -6.13796997, -8.96731567, -8.35235596, -6.13796997, 0,
    ];
    after(10).forEach((v, c) => expect(Math.abs(v - ref[c]), `cell ${c}`).toBeLessThanOrEqual(5e-9));
  });

  it("v_pi is the negated expected number of steps to termination", () => {
    // Sutton & Barto 2018, Figure 4.1, k = infinity / REFERENCE_VALUES.md section 1.1.
    const ref = [0, -14, -20, -22, -14, -18, -20, -20, -20, -20, -18, -14, -22, -20, -14, 0];
    expect(vPi.converged).toBe(true);
    grid(vPi.values).forEach((v, c) => expect(Math.abs(v - ref[c]), `cell ${c}`).toBeLessThan(1e-9));
  });

  it("sweep counts: 173 synchronous and 114 in-place until max|delta| < 1e-4", () => {
    // REFERENCE_VALUES.md section 1.1 "Sweep counts" (computed, convention-dependent). Our evaluatePolicy
    // stops after the first sweep whose max |delta| is < tol and counts that sweep; the in-place sweep
    // runs states in index order, which here is the row-major order the reference uses. Same convention.
    expect(evaluatePolicy(m, r, pi, { tol: 1e-4 }).iters).toBe(173);
    expect(evaluatePolicy(m, r, pi, { tol: 1e-4, inPlace: true }).iters).toBe(114);
  });

  it("the greedy policy with respect to v_3 is already optimal", () => {
    // Sutton & Barto 2018, Figure 4.1 annotation (greedy policy optimal from k = 3).
    const v3 = evaluatePolicy(m, r, pi, { maxIters: 3, tol: 0 }).values;
    const q3 = actionValues(m, r, v3);
    const moves = [-4, 4, -1, 1];
    for (let c = 1; c < 15; c++) {
      const s = stateOfCell(c);
      const best = Math.max(...[0, 1, 2, 3].map((a) => q3[s * 4 + a]));
      for (let a = 0; a < 4; a++) {
        if (q3[s * 4 + a] < best - 1e-12) continue;
        // Every greedy action must move one step closer to the nearest corner (optimal: v*(s) = -distance).
        const rr = Math.floor(c / 4) + (a === 0 ? -1 : a === 1 ? 1 : 0);
        const cc = (c % 4) + (a === 2 ? -1 : a === 3 ? 1 : 0);
        const dest = rr < 0 || rr > 3 || cc < 0 || cc > 3 ? c : c + moves[a];
        expect(cornerDistance(dest), `cell ${c} action ${m.actions[a]}`).toBe(cornerDistance(c) - 1);
      }
    }
    const greedy = valueIteration(m, r, { maxIters: 1 }).policy; // any policy; replaced below
    for (let s = 1; s < 15; s++) {
      let b = 0;
      for (let a = 1; a < 4; a++) if (q3[s * 4 + a] > q3[s * 4 + b]) b = a;
      greedy[s] = b;
    }
    const vg = grid(evaluatePolicy(m, r, deterministicPolicy(m, greedy), { tol: 1e-12 }).values);
    vg.forEach((v, c) => expect(v, `cell ${c}`).toBe(0 - cornerDistance(c)));
  });

  it("Exercise 4.1: q_pi(11, down) = -1 and q_pi(7, down) = -15", () => {
    // Sutton & Barto 2018, Exercise 4.1 / REFERENCE_VALUES.md section 1.1 (computed).
    const q = actionValues(m, r, vPi.values);
    const down = m.actions.indexOf("down");
    expect(q[11 * 4 + down]).toBeCloseTo(-1, 9);
    expect(q[7 * 4 + down]).toBeCloseTo(-15, 9);
  });
});

// -------------------------------------------------------------------------------------------------
// Sutton & Barto 2018, Example 4.3 (gambler's problem), model file generated in the test

function gamblerDocument(ph: number): ModelDocument {
  // States: capital 0..100 (0 and 100 terminal). Actions: stakes 0..50. A stake above min(s, 100 - s)
  // is not allowed in the book; here it keeps the capital like stake 0 (a self-loop, Q = V(s)), which
  // cannot raise the maximum, so v* is unchanged.
  const actions = Array.from({ length: 51 }, (_, a) => `stake${a}`);
  const transitions: ModelDocument["transitions"] = [];
  for (let s = 1; s < 100; s++) {
    for (let a = 0; a <= 50; a++) {
      if (a === 0 || a > Math.min(s, 100 - s)) {
        transitions.push({ state: s, action: a, outcomes: [{ next: s, p: 1 }] });
        continue;
      }
      const win = s + a;
      const winOutcome = win === 100 ? { next: win, p: ph, features: { reach100: 1 }, intent: 1 } : { next: win, p: ph };
      transitions.push({ state: s, action: a, outcomes: [winOutcome, { next: s - a, p: 1 - ph }] });
    }
  }
  return {
    format: "gapwatch-mdp/1",
    name: "gambler",
    gamma: 1,
    actions,
    states: 101,
    start: 50,
    terminal: [0, 100],
    features: ["reach100"],
    transitions,
    rewards: { default: { weights: { reach100: 1 } } },
  };
}

describe("Sutton & Barto 2018, Example 4.3 (gambler's problem, p_h = 0.4), as a model file", () => {
  const m = parseModelFile(JSON.stringify(gamblerDocument(0.4)), "gambler.json");
  const sol = valueIteration(m, designerReward(m, m.variants!.default), { tol: 1e-14 });

  it("v* at the tabulated states matches to 1e-9", () => {
    // REFERENCE_VALUES.md section 1.4 (computed by value iteration; the book shows a plot, Figure 4.3).
    const ref: Record<number, number> = {
      1: 0.0020656248, 2: 0.0051640619, 5: 0.017385399, 10: 0.0434634975, 12: 0.0576591942, 13: 0.0652393749, 20: 0.1086587436,
      25: 0.16, 30: 0.1860780985, 40: 0.2716468591, 45: 0.3229881154, 50: 0.4, 51: 0.4030984372, 55: 0.4260780985, 60: 0.4651952462,
      62: 0.4864887913, 70: 0.5629881154, 75: 0.64, 80: 0.6791171477, 87: 0.7697331869, 90: 0.8074702886, 95: 0.8844821732, 99: 0.9643329672,
    };
    expect(sol.converged).toBe(true);
    for (const [s, v] of Object.entries(ref)) expect(Math.abs(sol.values[Number(s)] - v), `v*(${s})`).toBeLessThanOrEqual(1e-9);
  });

  it("exact checks v*(50) = p_h, v*(25) = p_h^2, v*(75) = p_h + (1 - p_h) p_h", () => {
    // REFERENCE_VALUES.md section 1.4, "Exact checks".
    expect(sol.values[50]).toBeCloseTo(0.4, 12);
    expect(sol.values[25]).toBeCloseTo(0.16, 12);
    expect(sol.values[75]).toBeCloseTo(0.64, 12);
  });
});

// -------------------------------------------------------------------------------------------------
// Malformed model files: one line, code, file, JSON path

/** A small valid model (3 states, state 2 terminal) to break one defect at a time. */
function baseDoc(): Record<string, any> {
  return {
    format: "gapwatch-mdp/1",
    name: "tiny",
    gamma: 0.9,
    actions: ["wait", "hop"],
    states: ["low", "high", "done"],
    start: { low: 0.5, "1": 0.5 },
    terminal: [2],
    features: ["step", "coin"],
    transitions: [
      { state: 0, action: 0, outcomes: [{ next: 0, p: 1, features: { step: 1 } }] },
      { state: 0, action: 1, outcomes: [{ next: 1, p: 0.5, features: { coin: 1 } }, { next: 0, p: 0.5 }] },
      { state: 1, action: 0, outcomes: [{ next: 1, p: 1 }] },
      { state: 1, action: 1, outcomes: [{ next: 2, p: 1, intent: 1 }] },
    ],
    rewards: { default: { weights: { coin: 1, step: -0.1 } } },
    groups: { low: "west" },
  };
}

describe("parseModelFile accepts the base model", () => {
  it("builds the expected arrays", () => {
    const m = parseModelFile(JSON.stringify(baseDoc()), "tiny.json");
    expect(m.nStates).toBe(3);
    expect(Array.from(m.start)).toEqual([0.5, 0.5, 0]);
    expect(m.horizon).toBe(DEFAULT_HORIZON);
    expect(m.groups).toEqual(["west", null, null]);
    expect(m.variants).toEqual({ default: { name: "default", weights: { coin: 1, step: -0.1 } } });
    // (0, hop) has two outcomes; the terminal state gets one self-loop per action.
    expect(Array.from(m.saStart)).toEqual([0, 1, 3, 4, 5, 6, 7]);
    expect(Array.from(m.next)).toEqual([0, 1, 0, 1, 2, 2, 2]);
    expect(Array.from(m.intent)).toEqual([0, 0, 0, 0, 1, 0, 0]);
    expect(Array.from(m.featureValues)).toEqual([1, 0, 0, 1, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0]);
  });
  it("accepts a terminal state listed with self-loop outcomes, a count for states and an int start", () => {
    const d = baseDoc();
    d.states = 3;
    d.start = 0;
    d.groups = { "0": "west" };
    d.transitions.push({ state: 2, action: 1, outcomes: [{ next: 2, p: 1, features: { coin: 0 } }] });
    const m = parseModelFile(JSON.stringify(d), "tiny.json");
    expect(m.stateLabels).toEqual(["0", "1", "2"]);
    expect(Array.from(m.start)).toEqual([1, 0, 0]);
  });
});

interface Defect {
  what: string;
  mutate?: (d: Record<string, any>) => void;
  text?: string;
  code: string;
  path: string;
  /** Further text the line must contain (the fix, a suggestion). */
  says?: string[];
}

const defects: Defect[] = [
  { what: "bad JSON (missing comma)", text: '{\n  "format": "gapwatch-mdp/1"\n  "name": "x"\n}', code: "model.json", path: "bad.json:3:3", says: ["line 3, column 3", "missing comma"] },
  { what: "bad JSON (trailing comma)", text: '{"format": "gapwatch-mdp/1",\n "actions": [1, 2,]}', code: "model.json", path: "bad.json:2:18", says: ["trailing comma"] },
  { what: "bad JSON (empty file)", text: "", code: "model.json", path: "bad.json:1:1", says: ["expected a value"] },
  { what: "bad JSON (NaN)", text: '{"gamma": NaN}', code: "model.json", path: "bad.json:1:11", says: ["finite number"] },
  { what: "wrong format tag", mutate: (d) => (d.format = "gapwatch-mdp/9"), code: "model.format", path: "$.format", says: ['"gapwatch-mdp/1"'] },
  { what: "a reward file passed as a model", mutate: (d) => (d.format = "gapwatch-reward/1"), code: "model.format", path: "$.format", says: ["--reward"] },
  { what: "probabilities not summing to 1", mutate: (d) => (d.transitions[1].outcomes[1].p = 0.4), code: "model.probabilitySum", path: "$.transitions[1].outcomes", says: ["sum to 0.9", "sum to 1"] },
  { what: "probability above 1", mutate: (d) => (d.transitions[2].outcomes[0].p = 1.5), code: "model.probability", path: "$.transitions[2].outcomes[0].p", says: ["[0, 1]"] },
  { what: "a missing pair", mutate: (d) => d.transitions.splice(2, 1), code: "model.missingTransition", path: "$.transitions", says: ['"state": 1, "action": 0', "$.terminal"] },
  {
    what: "a duplicate pair",
    mutate: (d) => d.transitions.push({ state: 0, action: 1, outcomes: [{ next: 0, p: 1 }] }),
    code: "model.duplicateTransition",
    path: "$.transitions[4]",
    says: ["$.transitions[1]", "merge"],
  },
  { what: "an unknown outcome feature", mutate: (d) => (d.transitions[0].outcomes[0].features = { stpe: 1 }), code: "model.unknownFeature", path: "$.transitions[0].outcomes[0].features.stpe", says: ['did you mean "step"'] },
  { what: "an unknown weight feature", mutate: (d) => (d.rewards.default.weights = { coins: 1 }), code: "model.unknownFeature", path: "$.rewards.default.weights.coins", says: ['did you mean "coin"'] },
  {
    what: "a terminal state that leaves",
    mutate: (d) => d.transitions.push({ state: 2, action: 0, outcomes: [{ next: 0, p: 1 }] }),
    code: "model.terminalNotAbsorbing",
    path: "$.transitions[4].outcomes[0].next",
    says: ['"next": 2'],
  },
  {
    what: "a terminal state with reward",
    mutate: (d) => d.transitions.push({ state: 2, action: 0, outcomes: [{ next: 2, p: 1, features: { coin: 1 } }] }),
    code: "model.terminalNotAbsorbing",
    path: "$.transitions[4].outcomes[0]",
    says: ["zero features"],
  },
  { what: "next state out of range", mutate: (d) => (d.transitions[2].outcomes[0].next = 3), code: "model.nextState", path: "$.transitions[2].outcomes[0].next", says: ["0..2"] },
  { what: "state out of range", mutate: (d) => (d.transitions[2].state = -1), code: "model.stateIndex", path: "$.transitions[2].state", says: ["0..2"] },
  { what: "action out of range", mutate: (d) => (d.transitions[2].action = 2), code: "model.actionIndex", path: "$.transitions[2].action", says: ["0=wait, 1=hop"] },
  { what: "start probabilities not summing to 1", mutate: (d) => (d.start = { low: 0.5, high: 0.4 }), code: "model.startSum", path: "$.start", says: ["sum to 0.9"] },
  { what: "an unknown start state", mutate: (d) => (d.start = { hihg: 1 }), code: "model.unknownState", path: "$.start.hihg", says: ['did you mean "high"'] },
  { what: "an ambiguous state key", mutate: (d) => ((d.states = ["a", "2", "b"]), (d.start = { "2": 1 })), code: "model.ambiguousState", path: '$.start["2"]', says: ["states 1 and 2"] },
  { what: "an unknown top-level key", mutate: (d) => (d.horizn = 10), code: "model.unknownKey", path: "$.horizn", says: ['did you mean "horizon"'] },
  { what: "a misspelt required key", mutate: (d) => ((d.gama = d.gamma), delete d.gamma), code: "model.unknownKey", path: "$.gama", says: ['did you mean "gamma"'] },
  { what: "an unknown key far from any", mutate: (d) => (d.colour = "red"), code: "model.unknownKey", path: "$.colour", says: ["allowed keys here: format, name"] },
  { what: "an unknown outcome key", mutate: (d) => (d.transitions[3].outcomes[0].prob = 1), code: "model.unknownKey", path: "$.transitions[3].outcomes[0].prob", says: ['did you mean "p"'] },
  { what: "a probability given as a string", mutate: (d) => (d.transitions[0].outcomes[0].p = "1"), code: "model.schema", path: "$.transitions[0].outcomes[0].p", says: ['got the string "1"', "[0, 1]"] },
  { what: "a non-integer next state", mutate: (d) => (d.transitions[0].outcomes[0].next = 0.5), code: "model.schema", path: "$.transitions[0].outcomes[0].next", says: ["integer"] },
  { what: "null gamma", mutate: (d) => (d.gamma = null), code: "model.schema", path: "$.gamma", says: ["got null", "(0, 1]"] },
  { what: "gamma out of range", mutate: (d) => (d.gamma = 0), code: "model.gamma", path: "$.gamma", says: ["(0, 1]"] },
  { what: "a missing required key", mutate: (d) => delete d.features, code: "model.schema", path: "$.features", says: ["missing"] },
  { what: "a number among the state labels", mutate: (d) => (d.states = ["low", 7, "done"]), code: "model.schema", path: "$.states[1]", says: ["expected a string"] },
  { what: "states as a string", mutate: (d) => (d.states = "three"), code: "model.schema", path: "$.states", says: ["state count"] },
  { what: "an empty outcome list", mutate: (d) => (d.transitions[2].outcomes = []), code: "model.schema", path: "$.transitions[2].outcomes", says: ["at least 1 entry"] },
  { what: "a duplicate feature name", mutate: (d) => d.features.push("coin"), code: "model.duplicateFeature", path: "$.features[2]", says: ["twice"] },
  { what: "a top-level array", text: "[1, 2]", code: "model.schema", path: "$", says: ["expected a JSON object"] },
];

describe("malformed model files give one line with code, file and JSON path", () => {
  for (const d of defects) {
    it(d.what, () => {
      let text = d.text;
      if (text === undefined) {
        const doc = baseDoc();
        d.mutate!(doc);
        text = JSON.stringify(doc, null, 2);
        // The unbroken document must parse: each case breaks exactly one thing.
        expect(() => parseModelFile(JSON.stringify(baseDoc()), "base.json")).not.toThrow();
      }
      const { err, line } = inputError(() => parseModelFile(text!, "bad.json"));
      expect(err.code).toBe(d.code);
      expect(err.where).toContain("bad.json");
      expect(line).toContain(`error [${d.code}]`);
      if (d.path.startsWith("bad.json")) expect(err.where).toBe(d.path);
      else expect(err.where).toBe(`bad.json ${d.path}`);
      for (const s of d.says ?? []) expect(line).toContain(s);
    });
  }

  it("the bad-*.json fixtures (used by the CLI exit-code test) fail as described", () => {
    const cases: [string, string, string][] = [
      ["bad-json.json", "model.json", ":4:3"],
      ["bad-format.json", "model.format", " $.format"],
      ["bad-probability-sum.json", "model.probabilitySum", " $.transitions[1].outcomes"],
      ["bad-unknown-key.json", "model.unknownKey", " $.horizn"],
      ["bad-missing-transition.json", "model.missingTransition", " $.transitions"],
    ];
    for (const [f, code, suffix] of cases) {
      const file = modelFixture(f);
      const { err } = inputError(() => loadModelFile(file));
      expect(err.code, f).toBe(code);
      expect(err.where, f).toBe(file + suffix);
    }
  });

  it("an unreadable file is an InputError naming the file", () => {
    const { err } = inputError(() => loadModelFile(modelFixture("no-such-file.json")));
    expect(err.code).toBe("model.read");
    expect(err.where).toContain("no-such-file.json");
  });
});

// -------------------------------------------------------------------------------------------------
// Reward files

describe("parseRewardFile", () => {
  const good = { format: "gapwatch-reward/1", name: "step-cost", env: "sb-4x4", weights: { step: -1 } };
  it("reads the fixture and a shaped variant", () => {
    const file = join(fixtures, "rewards", "sb-step.json");
    expect(parseRewardFile(readFileSync(file, "utf8"), file)).toEqual({ name: "step-cost", env: "sb-4x4", source: file, weights: { step: -1 } });
    const shaped = parseRewardFile(JSON.stringify({ ...good, shaping: { potential: [0, 1.5], scale: 2 } }), "r.json");
    expect(shaped.shaping).toEqual({ potential: [0, 1.5], scale: 2 });
    expect(parseRewardFile(JSON.stringify({ ...good, shaping: { potential: "distance", scale: 1 } }), "r.json").shaping?.potential).toBe("distance");
  });
  const bad: [string, unknown, string, string, string][] = [
    ["misspelt key", { ...good, weigths: {}, weights: undefined }, "reward.unknownKey", "$.weigths", 'did you mean "weights"'],
    ["unknown shaping key", { ...good, shaping: { potential: "d", scale: 1, gamma: 1 } }, "reward.unknownKey", "$.shaping.gamma", "allowed keys here: potential, scale"],
    ["model tag", { ...good, format: "gapwatch-mdp/1" }, "reward.format", "$.format", "--env"],
    ["string weight", { ...good, weights: { step: "-1" } }, "reward.schema", "$.weights.step", "finite number"],
    ["missing env", { ...good, env: undefined }, "reward.schema", "$.env", "missing"],
    ["potential of wrong type", { ...good, shaping: { potential: 3, scale: 1 } }, "reward.schema", "$.shaping.potential", "potential"],
  ];
  for (const [what, doc, code, path, says] of bad) {
    it(`rejects ${what}`, () => {
      const { err, line } = inputError(() => parseRewardFile(JSON.stringify(doc), "r.json"));
      expect(err.code).toBe(code);
      expect(err.where).toBe(`r.json ${path}`);
      expect(line).toContain(says);
    });
  }
  it("rejects the bad-unknown-key fixture", () => {
    const file = join(fixtures, "rewards", "bad-unknown-key.json");
    const { err } = inputError(() => parseRewardFile(readFileSync(file, "utf8"), file));
    expect(err.code).toBe("reward.unknownKey");
    expect(err.where).toBe(`${file} $.weigths`);
  });
  it("JSON errors in reward files have line and column", () => {
    const { err } = inputError(() => parseRewardFile('{\n "name": "x",\n "env": \'y\'\n}', "r.json"));
    expect(err.code).toBe("reward.json");
    expect(err.where).toBe("r.json:3:9");
  });
});

// -------------------------------------------------------------------------------------------------
// Helpers

describe("helpers", () => {
  it("jsonPath quotes keys that are not identifiers", () => {
    expect(jsonPath(["transitions", 3, "outcomes", 1, "p"])).toBe("$.transitions[3].outcomes[1].p");
    expect(jsonPath(["features", "shaping.default"])).toBe('$.features["shaping.default"]');
  });
  it("didYouMean finds near misses only", () => {
    expect(didYouMean("horizn", ["horizon", "groups"])).toBe("horizon");
    expect(didYouMean("Gamma", ["gamma"])).toBe("gamma");
    expect(didYouMean("colour", ["format", "name", "gamma"])).toBeUndefined();
  });
  it("lineColumn counts from 1", () => {
    expect(lineColumn("ab\ncd", 0)).toEqual({ line: 1, column: 1 });
    expect(lineColumn("ab\ncd", 4)).toEqual({ line: 2, column: 2 });
  });
  it("locateJsonError agrees with JSON.parse on valid JSON and on damaged JSON (property)", () => {
    fc.assert(
      fc.property(fc.json(), fc.nat(), fc.constantFrom("delete", "comma", "brace", "quote"), (json, at, how) => {
        expect(locateJsonError(json)).toBeNull();
        const i = json.length === 0 ? 0 : at % json.length;
        const damaged =
          how === "delete" ? json.slice(0, i) + json.slice(i + 1) : json.slice(0, i) + (how === "comma" ? "," : how === "brace" ? "}" : '"') + json.slice(i);
        let valid = true;
        try {
          JSON.parse(damaged);
        } catch {
          valid = false;
        }
        const loc = locateJsonError(damaged);
        expect(loc === null).toBe(valid);
        if (loc) expect(loc.pos).toBeLessThanOrEqual(damaged.length);
      }),
      { numRuns: 300 },
    );
  });
});

// -------------------------------------------------------------------------------------------------
// Export and round trip

/** Check that `rt = parse(stringify(export(m)))` reproduces `m` (shaping folded into extra columns). */
function expectRoundTrip(m: FiniteModel): FiniteModel {
  const doc = exportModel(m);
  const rt = parseModelFile(JSON.stringify(doc), `${m.name}.json`);
  expect(rt.name).toBe(m.name);
  expect(rt.gamma).toBe(m.gamma);
  expect(rt.horizon).toBe(m.horizon);
  expect(rt.actions).toEqual(m.actions);
  expect(rt.stateLabels).toEqual(m.stateLabels);
  expectSameArray(rt.terminal, m.terminal, "terminal");
  expectSameArray(rt.start, m.start, "start");
  expectSameArray(rt.saStart, m.saStart, "saStart");
  expectSameArray(rt.next, m.next, "next");
  expectSameArray(rt.prob, m.prob, "prob");
  expectSameArray(rt.intent, m.intent, "intent");
  const nF = m.features.length;
  const nF2 = rt.features.length;
  expect(rt.features.slice(0, nF)).toEqual(m.features);
  const orig: number[] = [];
  const back: number[] = [];
  for (let o = 0; o < m.next.length; o++) {
    for (let f = 0; f < nF; f++) {
      orig.push(m.featureValues[o * nF + f]);
      back.push(rt.featureValues[o * nF2 + f]);
    }
  }
  expectSameArray(back, orig, "featureValues");
  const norm = (g: readonly (string | null)[] | undefined) => (g && g.some((x) => x !== null) ? [...g] : undefined);
  expect(norm(rt.groups)).toEqual(norm(m.groups));
  const names = Object.keys(m.variants ?? {});
  expect(Object.keys(rt.variants ?? {})).toEqual(names);
  for (const v of names) {
    expectSameArray(designerReward(rt, rt.variants![v]), designerReward(m, m.variants![v]), `designer reward of ${v}`);
    // Weights come back as written; a shaped variant gains exactly one extra column, weighted 1.
    const extra = Object.entries(rt.variants![v].weights).filter(([f]) => rt.features.indexOf(f) >= nF);
    expect(extra).toEqual(m.variants![v].shaping ? [[extra[0]?.[0], 1]] : []);
    expect(Object.fromEntries(Object.entries(rt.variants![v].weights).filter(([f]) => rt.features.indexOf(f) < nF))).toEqual(m.variants![v].weights);
  }
  // Exporting again gives the same document, and the pretty layout is the same JSON.
  expect(exportModel(rt)).toEqual(doc);
  expect(JSON.parse(formatModelDocument(doc))).toEqual(JSON.parse(JSON.stringify(doc)));
  return rt;
}


describe("exportModel round trip", () => {
  it("reproduces random small models (property)", () => {
    fc.assert(
      fc.property(randomModel, (m) => {
        let doc: ModelDocument;
        try {
          doc = exportModel(m);
        } catch (e) {
          // Only a state whose label is shared and whose index string is another state's label cannot be named.
          expect((e as InputError).code).toBe("model.export");
          return;
        }
        expect(doc.format).toBe("gapwatch-mdp/1");
        expectRoundTrip(m);
      }),
      { numRuns: 300 },
    );
  });

  it("exports shaping as a shaping.<variant> feature weighted 1 (and avoids name clashes)", () => {
    const b = new ModelBuilder({ name: "shaped", nStates: 3, actions: ["go"], features: ["step", "shaping.s"], gamma: 0.5, horizon: 10 });
    b.addOutcome(0, 0, 1, 1, [1, 0]).addOutcome(1, 0, 2, 1, [1, 0]).setTerminal(2).setStart(0, 1);
    b.setVariants({ s: { name: "s", weights: { step: -1 }, shaping: { potential: [4, 2, 100], scale: 3 } }, plain: { name: "plain", weights: { step: -1 } } });
    const m = b.build();
    const doc = exportModel(m);
    expect(doc.features).toEqual(["step", "shaping.s", "shaping.s.2"]);
    expect(doc.rewards).toEqual({ s: { weights: { step: -1, "shaping.s.2": 1 } }, plain: { weights: { step: -1 } } });
    // 3 * (0.5 * Phi(s') - Phi(s)) with Phi(terminal) = 0 (Ng, Harada & Russell 1999 form used by designerReward).
    expect(doc.transitions[0].outcomes[0].features).toEqual({ step: 1, "shaping.s.2": 3 * (0.5 * 2 - 4) });
    expect(doc.transitions[1].outcomes[0].features).toEqual({ step: 1, "shaping.s.2": 3 * (0.5 * 0 - 2) });
    expect(doc.start).toBe(0);
    expectRoundTrip(m);
  });

  it("round-trips the S&B fixture and the gambler's model", () => {
    expectRoundTrip(loadModelFile(modelFixture("sb-4x4.json")));
    expectRoundTrip(parseModelFile(JSON.stringify(gamblerDocument(0.4)), "gambler.json"));
  });

  it("round-trips every built-in scenario", async () => {
    const reg = await import("../../src/env/index.js");
    const names = reg.builtinScenarioNames();
    expect(names.length).toBeGreaterThan(0);
    for (const name of names) {
      const m = reg.loadScenario(name).model;
      const rt = expectRoundTrip(m);
      expect(rt.nStates, name).toBe(m.nStates);
    }
  });
});
