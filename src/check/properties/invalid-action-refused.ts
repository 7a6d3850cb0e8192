import fc from "fast-check";
import { GapwatchError } from "../../errors.js";
import { createRng, type Rng } from "../../rng/rng.js";
import { play, Violation } from "../drive.js";
import { type PropertySpec, type S, actionsArb, runFc, text } from "../harness.js";

// invalid-action-refused: after any prefix of play, for an invalid action x (an integer outside
// 0..n-1, a fraction, NaN): (a) the episode wrapper throws "module.action" and the episode is unchanged
// (the environment was not called, so no random draws were consumed, and the step count and state are
// as before); (b) the raw environment refuses x too: step(state, x) throws.
export const invalidActionRefused: PropertySpec = {
  name: "invalid-action-refused",
  summary: "actions outside the declared list are refused",
  run(sub, ctx) {
    const nA = sub.def.actions.length;
    const bad = fc.oneof(fc.integer({ min: nA, max: nA + 3 }), fc.integer({ min: -3, max: -1 }), fc.constant(0.5), fc.constant(Number.NaN));
    const arb = fc.record({ seed: fc.nat({ max: 2 ** 31 - 1 }), actions: actionsArb(sub), invalid: bad });
    return runFc("invalid-action-refused", sub, ctx, arb, ({ seed, actions, invalid }) => {
      // The wrapper's refusal happens before the environment is called: count calls through a spy.
      let calls = 0;
      const spy = { ...sub.def, step: (s: S, x: number, r: Rng) => (calls++, sub.def.step(s, x, r)), reset: (r: Rng) => (calls++, sub.def.reset(r)) };
      const a = play({ ...sub, def: spy }, seed, actions);
      const state = a.episode.state;
      if (!a.episode.done) {
        let code: string | undefined;
        const before = calls;
        const t = a.episode.t;
        try {
          a.episode.step(invalid, a.rng);
        } catch (e) {
          code = e instanceof GapwatchError ? e.code : "thrown";
        }
        if (code !== "module.action") throw new Violation(`the episode wrapper did not refuse action ${invalid} (got ${code ?? "a result"})`);
        if (calls !== before || a.episode.t !== t || a.episode.state !== state) throw new Violation(`the refused action ${invalid} reached the environment or changed the episode`);
      }
      let accepted: unknown;
      try {
        accepted = sub.def.step(state, invalid, createRng(`invalid/${seed}`));
      } catch {
        return;
      }
      throw new Violation(`step(${text(sub, state)}, ${invalid}) returned ${text(sub, (accepted as { state?: unknown })?.state)} instead of refusing: valid actions are 0..${nA - 1}`);
    });
  },
};
