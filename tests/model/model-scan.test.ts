/**
 * The byte-level fast path of model files (src/model/format/model-scan.ts, `fastModel`) against the
 * ordinary path (`parseModelFile`: JSON.parse, schema, semantic checks, ModelBuilder), which is the
 * reference here: on every file the fast path accepts, both give the same model (typed arrays compared
 * element by element, -0 told from 0); on every file the ordinary path refuses, the fast path gives
 * up, so the error message is always the ordinary path's.
 */
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { loadScenario, builtinScenarioNames } from "../../src/env/scenarios.js";
import { exportModel, formatModelDocument } from "../../src/model/format/export.js";
import { DEFAULT_MAX_MODEL_STATES, fastModel, parseModelBytes, parseModelFile } from "../../src/model/format/model-file.js";
import type { ModelDocument } from "../../src/model/format/schema.js";
import type { FiniteModel } from "../../src/model/types.js";
import { createRng } from "../../src/rng/rng.js";
import { mutate } from "../helpers/fuzz.js";
import { randomModel } from "../helpers/random-model.js";

const bytes = (text: string): Uint8Array => new Uint8Array(Buffer.from(text, "utf8"));
const fast = (text: string): FiniteModel | null => fastModel(bytes(text), "m.json", DEFAULT_MAX_MODEL_STATES);

/** The ordinary path's result, or the error it throws. */
function ordinary(text: string): { model?: FiniteModel; error?: unknown } {
  try {
    return { model: parseModelFile(text, "m.json") };
  } catch (error) {
    return { error };
  }
}

/** Both paths agree on `text`; returns whether the fast path accepted it. */
function agree(text: string): boolean {
  const f = fast(text);
  const o = ordinary(text);
  if (f === null) return false;
  expect(o.error, "the fast path accepted a file the ordinary path refuses").toBeUndefined();
  expect(f).toEqual(o.model);
  return true;
}

const exported = builtinScenarioNames().map((name) => ({ name, text: formatModelDocument(exportModel(loadScenario(name).model)) }));

describe("fast path of model files", () => {
  it.each(exported)("accepts the export of $name and gives the ordinary path's model", ({ text }) => {
    expect(agree(text)).toBe(true);
    expect(agree(JSON.stringify(JSON.parse(text)))).toBe(true);
    expect(agree(JSON.stringify(JSON.parse(text), null, "\t"))).toBe(true);
  });

  it("accepts keys in any order, outcomes before state, a byte-order mark", () => {
    const doc = JSON.parse(exported[0].text) as ModelDocument;
    const reordered = {
      transitions: doc.transitions.map((t) => ({ outcomes: t.outcomes.map((o) => ({ ...(o.intent === undefined ? {} : { intent: o.intent }), p: o.p, next: o.next })), action: t.action, state: t.state })).reverse(),
      ...doc,
    };
    reordered.transitions = [...reordered.transitions].reverse();
    expect(agree(JSON.stringify(reordered))).toBe(true);
    expect(agree("\ufeff" + exported[0].text)).toBe(true);
  });

  it("gives up on every mutant the ordinary path refuses, and agrees on the rest (seeded mutants of two exports)", () => {
    const rng = createRng("model-scan-mutants");
    for (let i = 0; i < 120; i++) agree(mutate(exported[i % 2 === 0 ? 1 : exported.length - 1].text, rng));
  });

  it("number text: every JSON spelling of a probability gives JSON.parse's double", () => {
    const spellings = ["0.5", "5e-1", "5E-1", "0.50", "50e-2", "0.0000000000000000000000005e24", "0.1", "0.30000000000000004", "-0", "1e-400"];
    for (const p of spellings) {
      const q = JSON.parse(p) as number;
      const text = JSON.stringify({
        format: "gapwatch-mdp/1", name: "n", gamma: 0.9, actions: ["a"], states: 1, start: 0, terminal: [], features: ["f"],
        transitions: [{ state: 0, action: 0, outcomes: [{ next: 0, p: 1, intent: 0, features: { f: 0 } }] }],
      }).replace('"intent":0', `"intent":${p}`).replace('"f":0', `"f":${p}`);
      const m = fast(text);
      expect(m, p).not.toBeNull();
      expect(Object.is(m!.intent[0], q), p).toBe(true);
      expect(Object.is(m!.featureValues[0], q), p).toBe(true);
    }
  });

  it("property: random models exported as model files load the same on both paths", () => {
    fc.assert(
      fc.property(randomModel, (m) => {
        let text: string;
        try {
          text = JSON.stringify(exportModel(m));
        } catch (e) {
          // A state whose label is shared and whose index string is another state's label cannot be named.
          expect((e as { code?: string }).code).toBe("model.export");
          return;
        }
        expect(agree(text)).toBe(true);
        expect(parseModelBytes(bytes(text), "m.json")).toEqual(ordinary(text).model);
      }),
      { numRuns: 150 },
    );
  });
});
