/**
 * DRN import/export (src/model/drn.ts). The grammar follows Storm's documentation page "DRN input
 * format" and its parser/exporter sources (moves-rwth/storm: src/storm-parsers/parser/
 * DirectEncodingParser.cpp, src/storm/io/DirectEncodingExporter.cpp).
 */
import { dirname, join } from "node:path";
import { fileURLToPath } from "node:url";
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { formatError, InputError } from "../../src/errors.js";
import { ModelBuilder } from "../../src/model/builder.js";
import { loadDrnFile, parseDrn } from "../../src/model/drn.js";
import { formatDrn } from "../../src/model/drn-export.js";
import { builtinScenarioNames, loadScenario, resolveReward } from "../../src/env/index.js";
import { designerReward, expectedPerStateAction } from "../../src/model/reward.js";
import type { FiniteModel } from "../../src/model/types.js";
import { startValue } from "../../src/solve/policy.js";
import { valueIteration } from "../../src/solve/value-iteration.js";
import { randomMdp } from "../helpers/random-mdp.js";

const here = dirname(fileURLToPath(import.meta.url));
const fixture = (name: string) => join(here, "..", "fixtures", "models", name);

function maxAbsDiff(a: ArrayLike<number>, b: ArrayLike<number>): number {
  expect(a.length).toBe(b.length);
  let d = 0;
  for (let i = 0; i < a.length; i++) d = Math.max(d, Math.abs(a[i] - b[i]));
  return d;
}

const roundTrip = (m: FiniteModel) => {
  const out = formatDrn(m);
  const back = parseDrn(out.text, `${m.name}.drn`);
  return { out, back };
};

const solve = (m: FiniteModel, r: Float64Array) => valueIteration(m, r, { tol: 1e-12 }).values;

// -------------------------------------------------------------------------------------------------

describe("round trip of every built-in scenario and reward variant", () => {
  for (const name of builtinScenarioNames()) {
    it(`${name}: same structure, same designer and intent values within 1e-9`, () => {
      const m = loadScenario(name).model;
      const { out, back } = roundTrip(m);
      const p = back.model;
      expect(p.nStates).toBe(m.nStates);
      expect(p.actions).toEqual(m.actions);
      expect(p.features).toEqual(m.features);
      expect(p.stateLabels).toEqual(m.stateLabels);
      expect(p.gamma).toBe(m.gamma);
      expect(p.horizon).toBe(m.horizon);
      expect(Array.from(p.terminal)).toEqual(Array.from(m.terminal));
      expect(Array.from(p.start)).toEqual(Array.from(m.start));
      if (m.groups?.some((g) => g !== null)) expect(p.groups).toEqual(m.groups);
      expect(Object.keys(p.potentials ?? {}).sort()).toEqual(Object.keys(m.potentials ?? {}).sort());
      // The file declares the choices it lists (every state lists every action).
      expect(out.text).toContain(`@nr_choices\n${m.nStates * m.nActions}\n`);
      // Terminals stay absorbing with zero reward: one self-loop per action, probability 1.
      for (let s = 0; s < p.nStates; s++) {
        if (!p.terminal[s]) continue;
        for (let k = s * p.nActions; k < (s + 1) * p.nActions; k++) {
          expect(p.saStart[k + 1] - p.saStart[k]).toBe(1);
          expect(p.next[p.saStart[k]]).toBe(s);
          expect(p.intent[p.saStart[k]]).toBe(0);
        }
      }
      const variants = Object.keys(m.variants ?? {});
      expect(variants.length).toBeGreaterThan(0);
      for (const vn of variants) {
        const v = resolveReward(m, vn);
        const r0 = designerReward(m, v);
        const r1 = designerReward(p, v);
        // Expected one-step reward per state-action is what DRN keeps (exact up to rounding).
        expect(maxAbsDiff(expectedPerStateAction(p, r1), expectedPerStateAction(m, r0)), `${name}/${vn} r(s,a)`).toBeLessThan(1e-12);
        const v0 = solve(m, r0);
        const v1 = solve(p, r1);
        expect(maxAbsDiff(v1, v0), `${name}/${vn} values`).toBeLessThan(1e-9);
        expect(Math.abs(startValue(p, v1) - startValue(m, v0))).toBeLessThan(1e-9);
      }
      expect(maxAbsDiff(solve(p, p.intent), solve(m, m.intent)), `${name} intent values`).toBeLessThan(1e-9);
    });
  }
});

// -------------------------------------------------------------------------------------------------

describe("the documented example's layout: Knuth-Yao die (tests/fixtures/models/knuth-yao-die.drn)", () => {
  // Storm documentation, "DRN input format", example file (two dice, reward model "coinflips"):
  // same header, state rewards [0], choice reward [1] per flip, absorbing labelled "done" states.
  const { model: m, warnings } = loadDrnFile(fixture("knuth-yao-die.drn"), { terminalLabel: "done" });

  it("parses with 13 states, 2 actions, 6 absorbing done states, start state 0", () => {
    expect(m.nStates).toBe(13);
    expect(m.actions).toEqual(["0", "1"]);
    expect(m.features).toEqual(["coinflips"]);
    expect(Array.from(m.terminal)).toEqual([0, 0, 0, 0, 0, 0, 0, 1, 1, 1, 1, 1, 1]);
    expect(m.start[0]).toBe(1);
    expect(m.gamma).toBe(1);
    // States 1..6 list only action 0 (as in the documented example); action 1 is a copy there.
    expect(warnings.some((w) => /6 state-action pair\(s\) missing/.test(w))).toBe(true);
    expect(warnings.some((w) => /no discount/.test(w))).toBe(true);
    expect(warnings.some((w) => /label\(s\) with no meaning/.test(w) && /"one"/.test(w))).toBe(true);
  });

  it("without the terminal-label option the done states stay absorbing non-terminals, with a warning and the same values", () => {
    const plain = loadDrnFile(fixture("knuth-yao-die.drn"));
    expect(Array.from(plain.model.terminal).every((t) => t === 0)).toBe(true);
    expect(plain.warnings.some((w) => /^6 absorbing zero-reward state\(s\) are not labelled terminal/.test(w))).toBe(true);
    const r = designerReward(plain.model, { name: "flips", weights: { coinflips: 1 } });
    expect(valueIteration(plain.model, r, { tol: 1e-13 }).values[0]).toBeCloseTo(11 / 3, 9);
  });

  it("maximal expected number of coin flips is 11/3 (derived by hand)", () => {
    // Derivation (Knuth & Yao's die; undiscounted expected flips E, E(done) = 0):
    //   E4 = E5 = 1 (both successors are faces); E3 = 1 + E1/2; E6 = 1 + E2/2;
    //   E1 = 1 + (E3 + E4)/2 = 1 + (1 + E1/2 + 1)/2 = 2 + E1/4  =>  E1 = 8/3, E3 = 7/3;
    //   by symmetry E2 = 8/3, E6 = 7/3; flipping from 0: 1 + (E1 + E2)/2 = 11/3;
    //   rolling from 0 costs 3 flips flat; max(11/3, 3) = 11/3, action 0.
    // The expected number of flips 11/3 matches Knuth & Yao (1976) for their die (from memory).
    const r = designerReward(m, { name: "flips", weights: { coinflips: 1 } });
    const sol = valueIteration(m, r, { tol: 1e-13 });
    expect(sol.converged).toBe(true);
    expect(sol.values[0]).toBeCloseTo(11 / 3, 9);
    expect(sol.values[1]).toBeCloseTo(8 / 3, 9);
    expect(sol.values[3]).toBeCloseTo(7 / 3, 9);
    expect(sol.values[4]).toBeCloseTo(1, 9);
    expect(sol.policy[0]).toBe(0);
    // "roll" draws each face with probability 1/6 read from the fraction "1/6".
    const k = 0 * m.nActions + 1;
    expect(m.saStart[k + 1] - m.saStart[k]).toBe(6);
    for (let o = m.saStart[k]; o < m.saStart[k + 1]; o++) expect(m.prob[o]).toBe(1 / 6);
  });
});

// -------------------------------------------------------------------------------------------------

describe("grammar details", () => {
  it("state rewards add to every choice; placeholders, comments, quoted labels, state names, DTMC", () => {
    const text = [
      "// a comment",
      "@type: DTMC",
      "@parameters",
      "",
      "@placeholders",
      "$half : 1/2",
      "@reward_models",
      "cost intent",
      "@nr_states",
      "2",
      "@nr_choices",
      "2",
      "@model",
      'state 0 [2, 0] init "group:night shift"',
      "//(x=0)",
      "\taction 0 [1, 0.5]",
      "\t\t0 : $half",
      "\t\t1 : 0.5",
      "state 1 terminal",
      "\taction 0",
      "\t\t1 : 1",
    ].join("\n");
    const { model: m } = parseDrn(text, "tiny.drn", { gamma: 0.5 });
    expect(m.stateLabels).toEqual(["(x=0)", "1"]);
    expect(m.groups).toEqual(["night shift", null]);
    expect(m.actions).toEqual(["0"]);
    // Per outcome of state 0: cost = state reward 2 + choice reward 1 = 3; intent = 0.5.
    expect(Array.from(m.featureValues.slice(0, 2))).toEqual([3, 3]);
    expect(Array.from(m.intent.slice(0, 2))).toEqual([0.5, 0.5]);
    // V(0) = 3 + gamma * 0.5 * V(0) => V(0) = 3 / (1 - 0.25) = 4 (hand derivation).
    const v = valueIteration(m, designerReward(m, { name: "c", weights: { cost: 1 } }), { tol: 1e-13 }).values;
    expect(v[0]).toBeCloseTo(4, 10);
  });

  it("an option names the intent reward model", () => {
    const text = "@type: MDP\n@reward_models\nscore reached\n@nr_states\n1\n@model\nstate 0 init\n\taction go [1, 2]\n\t\t0 : 1\n";
    const a = parseDrn(text, "x.drn", { gamma: 0.9 });
    expect(a.model.features).toEqual(["score", "reached"]);
    expect(a.warnings.some((w) => /no reward model named "intent"/.test(w))).toBe(true);
    const b = parseDrn(text, "x.drn", { gamma: 0.9, intentRewardModel: "reached" });
    expect(b.model.features).toEqual(["score"]);
    expect(b.model.intent[0]).toBe(2);
    expect(formatDrn(b.model, { intentRewardModel: "reached" }).text).toContain("@reward_models\nscore reached\n");
  });

  it("export warns when outcomes of a state-action differ in a feature, and the expectation keeps the values", () => {
    // A loop that pays only on one outcome: "spin" in state 0 pays 1 when it stays, 0 when it ends.
    const b = new ModelBuilder({ name: "spin", nStates: 2, actions: ["spin", "stop"], features: ["bonus", "step"], gamma: 0.9, horizon: 50 });
    b.addOutcome(0, 0, 0, 0.5, [1, -1]).addOutcome(0, 0, 1, 0.5, [0, -1]);
    b.addOutcome(0, 1, 1, 1, [0, -1]);
    b.setTerminal(1).setStart(0, 1);
    const m = b.build();
    const { out, back } = roundTrip(m);
    expect(out.warnings.filter((w) => /differs between the outcomes/.test(w))).toHaveLength(1);
    expect(out.warnings[0]).toMatch(/feature "bonus" differs between the outcomes of 1 state-action pair\(s\), e\.g\. state 0 \(0\) action spin/);
    expect(out.text).toContain("\taction spin [0.5, -1, 0]");
    // Per-outcome evidence is gone: both outcomes now carry the expectation 0.5.
    expect(back.model.featureValues[0]).toBe(0.5);
    expect(back.model.featureValues[2]).toBe(0.5);
    // V(0) under "bonus" with spin forever-until-exit: V = 0.5 + 0.9 * 0.5 * V => V = 0.5 / 0.55 (hand).
    const w = { name: "b", weights: { bonus: 1 } };
    expect(solve(back.model, designerReward(back.model, w))[0]).toBeCloseTo(0.5 / 0.55, 10);
    expect(solve(m, designerReward(m, w))[0]).toBeCloseTo(0.5 / 0.55, 10);
  });

  it("keeps a non-uniform start distribution through the start comments, and says other tools lose it", () => {
    const b = new ModelBuilder({ name: "two starts", nStates: 3, actions: ["a"], features: [], gamma: 0.9, horizon: 5 });
    b.addOutcome(0, 0, 2, 1, null).addOutcome(1, 0, 2, 1, null).setTerminal(2).setStart(0, 0.25).setStart(1, 0.75);
    const { out, back } = roundTrip(b.build());
    expect(out.warnings.some((w) => /start distribution is not uniform/.test(w))).toBe(true);
    expect(Array.from(back.model.start)).toEqual([0.25, 0.75, 0]);
    expect(back.model.name).toBe("two starts");
    // Without the comments (another tool's file) the init states share the start uniformly.
    const bare = out.text.split("\n").filter((l) => !l.startsWith("// gapwatch-drn: start")).join("\n");
    expect(Array.from(parseDrn(bare, "bare.drn").model.start)).toEqual([0.5, 0.5, 0]);
  });

  it("refuses __proto__ as a reward model or action name", () => {
    const text = "@type: MDP\n@reward_models\n__proto__\n@nr_states\n1\n@model\nstate 0 init\n\taction go [1]\n\t\t0 : 1\n";
    expect(() => parseDrn(text, "p.drn")).toThrow(/reward model name "__proto__" is not allowed/);
    expect(() => parseDrn(text.replace("__proto__", "r").replace("action go", "action __proto__"), "p.drn")).toThrow(/action name "__proto__"/);
  });

  it("merges outcomes that lead to the same state and writes targets ascending", () => {
    const b = new ModelBuilder({ name: "dup", nStates: 3, actions: ["a"], features: [], gamma: 0.9, horizon: 5 });
    b.addOutcome(0, 0, 2, 0.25, null).addOutcome(0, 0, 1, 0.5, null).addOutcome(0, 0, 2, 0.25, null);
    b.addOutcome(1, 0, 1, 1, null).setTerminal(2).setStart(0, 1);
    const text = formatDrn(b.build()).text;
    expect(text).toContain("state 0 init\n\taction a [0]\n\t\t1 : 0.5\n\t\t2 : 0.5\n");
  });

  it("refuses names DRN cannot hold", () => {
    const b = new ModelBuilder({ name: "n", nStates: 1, actions: ["go left"], features: [], gamma: 0.9, horizon: 5 });
    b.addOutcome(0, 0, 0, 1, null).setStart(0, 1);
    expect(() => formatDrn(b.build())).toThrow(/action "go left" cannot be written in DRN/);
  });
});

// -------------------------------------------------------------------------------------------------

describe("errors: one line naming the file and line", () => {
  const head = "@type: MDP\n@parameters\n\n@reward_models\nr\n@nr_states\n2\n@nr_choices\n2\n@model\n";
  //            1           2            3 4               5 6          7 8           9 10
  const ok = "state 0 init\n\taction a [1]\n\t\t0 : 0.5\n\t\t1 : 0.5\nstate 1 terminal\n\taction a [0]\n\t\t1 : 1\n";
  //          11            12             13          14          15               16             17
  const cases: [string, string, string, number][] = [
    ["missing @type", "@nr_states\n2\n@model\n" + ok, "drn.header", 3],
    ["not a DRN file at all", "hello world\n", "drn.header", 1],
    ["no @model section", "@type: MDP\n@nr_states\n2\n", "drn.header", 4],
    ["bad number in a probability", head + ok.replace("\t\t0 : 0.5", "\t\t0 : 0.5x"), "drn.number", 13],
    ["bad number in a reward", head + ok.replace("action a [1]", "action a [one]"), "drn.number", 12],
    ["probabilities not summing to 1", head + ok.replace("\t\t1 : 0.5", "\t\t1 : 0.4"), "drn.probabilitySum", 12],
    ["target state out of range", head + ok.replace("\t\t1 : 0.5", "\t\t5 : 0.5"), "drn.stateIndex", 14],
    ["state index out of range", head + ok.replace("state 1 terminal", "state 2 terminal"), "drn.stateIndex", 15],
    ["fewer choices than @nr_choices", head.replace("@nr_choices\n2", "@nr_choices\n3") + ok, "drn.choiceCount", 9],
    ["more choices than @nr_choices", head.replace("@nr_choices\n2", "@nr_choices\n1") + ok, "drn.choiceCount", 16],
    ["unknown label syntax (unterminated quote)", head + ok.replace("state 0 init", 'state 0 init "open'), "drn.label", 11],
    ["unknown label syntax (stray quote)", head + ok.replace("state 0 init", 'state 0 in"it'), "drn.label", 11],
    ["unsupported model type", head.replace("@type: MDP", "@type: CTMC") + ok, "drn.type", 1],
  ];
  for (const [what, text, code, line] of cases) {
    it(`${what} -> ${code} at line ${line}`, () => {
      let caught: unknown;
      try {
        parseDrn(text, "bad.drn");
      } catch (e) {
        caught = e;
      }
      expect(caught).toBeInstanceOf(InputError);
      const err = caught as InputError;
      expect(err.code).toBe(code);
      expect(err.exitCode).toBe(2);
      const rendered = formatError(err);
      expect(rendered).not.toMatch(/\n/);
      expect(rendered).toContain(`bad.drn:${line}:`);
    });
  }

  it("the unmodified error-case file parses (so each case fails for its own reason)", () => {
    const { model } = parseDrn(head + ok, "good.drn", { gamma: 0.9 });
    expect(model.nStates).toBe(2);
  });
});

// -------------------------------------------------------------------------------------------------

describe("property: random models round-trip to the same values", () => {
  it("designer values within 1e-9 after formatDrn -> parseDrn", () => {
    fc.assert(
      fc.property(randomMdp({ states: [1, 6], actions: [1, 3], gamma: [0.5, 0.95] }), ({ model }) => {
        const { back } = roundTrip(model);
        const p = back.model;
        expect(Array.from(p.terminal)).toEqual(Array.from(model.terminal));
        const w = { name: "r", weights: { r: 1 } };
        const d = maxAbsDiff(solve(p, designerReward(p, w)), solve(model, designerReward(model, w)));
        expect(d).toBeLessThan(1e-9);
      }),
      { numRuns: 100 },
    );
  });
});
