// The episode wrapper: the time limit is a truncation kept apart from termination, and steps after the
// end, before reset, or with invalid actions are refused without calling the environment.
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { InputError } from "../../src/errors.js";
import { createRng } from "../../src/rng/rng.js";
import { defineEnv } from "../../src/sim/define.js";
import { Episode } from "../../src/sim/episode.js";

let calls = 0;
// A counter that terminates on reaching `goal` by "inc"; "wait" does nothing.
const counter = (goal: number, horizon: number) =>
  defineEnv<{ n: number }>({
    name: "counter",
    actions: ["wait", "inc"],
    features: ["inc"],
    horizon,
    reset: () => ({ n: 0 }),
    step: (s, a) => {
      calls++;
      const n = s.n + a;
      return { state: { n }, features: { inc: a }, intent: 0, terminated: n >= goal };
    },
  });

describe("Episode", () => {
  it("ends by termination or by the step limit, never both, and refuses the next step (property)", () => {
    fc.assert(
      fc.property(fc.integer({ min: 1, max: 8 }), fc.integer({ min: 1, max: 8 }), fc.array(fc.nat({ max: 1 }), { maxLength: 20 }), (goal, horizon, actions) => {
        const ep = new Episode(counter(goal, horizon), { source: "counter" });
        const rng = createRng(1);
        ep.reset(rng);
        let incs = 0;
        for (const a of actions) {
          if (ep.done) break;
          const r = ep.step(a, rng);
          incs += a;
          expect(r.terminated && r.truncated).toBe(false);
          expect(r.terminated).toBe(incs >= goal);
          expect(r.truncated).toBe(!r.terminated && r.t === horizon);
        }
        if (ep.done) {
          const before = calls;
          expect(() => ep.step(0, rng)).toThrowError(/step after the episode ended \((terminated|truncated) at step \d+\)/);
          expect(calls).toBe(before);
        }
      }),
      { numRuns: 200, seed: 3 },
    );
  });

  it("refuses invalid actions and steps before reset with typed one-line errors", () => {
    const ep = new Episode(counter(3, 10), { source: "counter.ts" });
    expect(() => ep.step(0, createRng(1))).toThrowError(/before reset/);
    ep.reset(createRng(1));
    const before = calls;
    for (const bad of [2, -1, 0.5, Number.NaN]) {
      try {
        ep.step(bad, createRng(1));
        expect.unreachable();
      } catch (e) {
        expect(e).toBeInstanceOf(InputError);
        expect((e as InputError).code).toBe("module.action");
        expect((e as InputError).message).toMatch(/expected an integer 0..1 \(0=wait, 1=inc\)/);
      }
    }
    expect(calls).toBe(before);
    expect(ep.t).toBe(0);
  });
});
