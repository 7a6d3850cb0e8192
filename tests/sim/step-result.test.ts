// What a module's step returns is checked the same way when it is compiled to a model and when an episode
// plays it: a step that returns a Promise, nothing, no state, a non-boolean `terminated`, or an object whose
// getter throws is one line naming the call (module.result / module.threw), never a silently wrong model
// (a Promise-returning step used to compile to a 2-state model that `train` called aligned).
import { describe, expect, it } from "vitest";
import { createRng } from "../../src/rng/rng.js";
import { compileModuleStates } from "../../src/sim/compile.js";
import { defineEnv } from "../../src/sim/define.js";
import { Episode } from "../../src/sim/episode.js";

const withStep = (step: (s: number, a: number) => unknown, features = ["moved"]) =>
  defineEnv<number>({ name: "odd-step", actions: ["stay", "go"], features, reset: () => 0, step: step as never });

const codeOf = (fn: () => unknown): string => {
  try {
    fn();
  } catch (e) {
    return `${(e as { code?: string }).code}: ${(e as Error).message}`;
  }
  return "accepted";
};

const bad: [string, (s: number, a: number) => unknown, RegExp][] = [
  ["a Promise", async (s) => ({ state: s + 1, features: {}, terminated: s > 2 }), /module\.result: .*returned a Promise/],
  ["nothing", () => undefined, /module\.result: .*returned undefined/],
  ["no state", () => ({ features: { moved: 1 }, terminated: false }), /module\.result: .*returned no state/],
  ["a string for terminated", (s) => ({ state: s, features: {}, terminated: "yes" }), /module\.result: .*terminated = yes/],
  ["a throwing getter", () => ({ get state(): number { throw new Error("boom"); }, features: {} }), /module\.threw: .*boom/],
];

describe("step results", () => {
  for (const [what, step, message] of bad) {
    it(`a step that returns ${what} is refused by the compiler and by the episode`, () => {
      const def = withStep(step);
      expect(codeOf(() => compileModuleStates(def, { maxStates: 100, source: "odd.ts" }))).toMatch(message);
      const ep = new Episode(def, { source: "odd.ts" });
      const rng = createRng(1);
      ep.reset(rng);
      expect(codeOf(() => ep.step(1, rng))).toMatch(message);
    });
  }

  it("a feature named like an Object.prototype member reads as absent (0), not as the inherited function", () => {
    const def = withStep((s, a) => ({ state: Math.min(2, s + a), features: a ? { moved: 1 } : {}, terminated: s + a >= 2 }), ["moved", "toString", "constructor"]);
    const { model } = compileModuleStates(def, { maxStates: 100, source: "proto.ts" })!;
    for (const v of model.featureValues) expect(Number.isFinite(v)).toBe(true);
  });
});
