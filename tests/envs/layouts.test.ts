/**
 * Layout families: layout 0 is the scenario as written, layout N is a pure function of N (property
 * test), every generated layout is solvable and passes `gapwatch check`, and the spec forms
 * (`<env>#<N>`, `--layouts A-B`) parse as documented.
 */
import fc from "fast-check";
import { copyFileSync, mkdtempSync, rmSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { exportModel, formatModelDocument } from "../../src/model/format/export.js";
import { describe, expect, it } from "vitest";
import { runCheck } from "../../src/check/run.js";
import { builtinScenarioNames, loadEnvSync, loadScenario, parseLayoutRange, splitLayout, withLayout } from "../../src/env/index.js";
import { gridSolvable } from "../../src/model/layouts.js";
import { canonicalJson } from "../../src/util/canonical-json.js";
import type { FiniteModel } from "../../src/model/types.js";

const fingerprint = (m: FiniteModel) =>
  canonicalJson({ n: m.nStates, a: m.nActions, next: [...m.next], prob: [...m.prob], f: [...m.featureValues], i: [...m.intent], start: [...m.start], lay: m.layout?.kind === "grid" ? m.layout.map : null });

describe("layout families of the built-ins", () => {
  for (const name of builtinScenarioNames()) {
    it(`${name}: layout 0 is the scenario as written, layout N is deterministic and differs from 0 for some N`, () => {
      expect(fingerprint(loadEnvSync(withLayout(name, 0)).model)).toBe(fingerprint(loadScenario(name).model));
      fc.assert(
        fc.property(fc.integer({ min: 1, max: 5000 }), (n) => {
          const a = loadEnvSync(`${name}#${n}`).model;
          const b = loadEnvSync(`${name}#${n}`).model;
          expect(fingerprint(a)).toBe(fingerprint(b));
          if (a.layout?.kind === "grid") expect(gridSolvable(a.layout.map)).toBe(true);
        }),
        { numRuns: 15, seed: 7 },
      );
      const base = fingerprint(loadScenario(name).model);
      expect([1, 2, 3, 4, 5].some((n) => fingerprint(loadEnvSync(`${name}#${n}`).model) !== base)).toBe(true);
    });
  }

  it("every generated layout of every built-in passes gapwatch check (layouts 1-4)", async () => {
    for (const name of builtinScenarioNames()) {
      for (let n = 1; n <= 4; n++) {
        const r = await runCheck(`${name}#${n}`, { runs: 10, seed: 3 });
        expect(r.properties.filter((p) => p.status === "failed").map((p) => `${name}#${n} ${p.name}`)).toEqual([]);
      }
    }
  }, 120_000);
});

describe("layout specs", () => {
  it("split and join: layout 0 leaves the spec unchanged", () => {
    expect(withLayout("fresh-coat-tug", 0)).toBe("fresh-coat-tug");
    expect(splitLayout("fresh-coat-tug#12")).toEqual({ base: "fresh-coat-tug", layout: 12 });
    expect(splitLayout("a/b.json")).toEqual({ base: "a/b.json", layout: 0 });
    fc.assert(fc.property(fc.string({ minLength: 1 }).filter((s) => !/#\d+$/.test(s)), fc.nat(1_000_000), (base, n) => {
      expect(splitLayout(withLayout(base, n))).toEqual({ base, layout: n });
    }));
  });
  it("ranges: inclusive, comma unions without repeats, bad text refused with config.layouts", () => {
    expect(parseLayoutRange("1-4")).toEqual([1, 2, 3, 4]);
    expect(parseLayoutRange("0,5-6,5")).toEqual([0, 5, 6]);
    expect(() => parseLayoutRange("4-1")).toThrow(/ends before/);
    expect(() => parseLayoutRange("x")).toThrow(/range A-B/);
  });
  it("a single model file has no layouts; a folder or list of model files does (layout = file)", () => {
    expect(() => loadEnvSync("tests/fixtures/models/sb-4x4.json#1")).toThrow(/one model, not a family/);
    const list = "tests/fixtures/models/sb-4x4.json,tests/fixtures/models/sb-4x4.json";
    expect(loadEnvSync(`${list}#1`).model.nStates).toBe(loadEnvSync("tests/fixtures/models/sb-4x4.json").model.nStates);
    expect(() => loadEnvSync(`${list}#2`)).toThrow(/layouts 0\.\.1/);
    // A folder: its model files sorted by name.
    const dir = mkdtempSync(join(tmpdir(), "gw-family-"));
    try {
      copyFileSync("tests/fixtures/models/sb-4x4.json", join(dir, "b.json"));
      writeFileSync(join(dir, "a.json"), formatModelDocument(exportModel(loadEnvSync("fresh-coat-tug").model)));
      expect(loadEnvSync(dir).model.nStates).toBe(loadEnvSync("fresh-coat-tug").model.nStates);
      expect(loadEnvSync(`${dir}#1`).model.nStates).toBe(loadEnvSync("tests/fixtures/models/sb-4x4.json").model.nStates);
      expect(loadEnvSync(`${dir}#1`).spec).toBe(`${dir}#1`);
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });
});
