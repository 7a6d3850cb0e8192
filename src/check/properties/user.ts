import fc from "fast-check";
import { createRng } from "../../rng/rng.js";
import { play, Violation } from "../drive.js";
import { type PropertySpec, actionsArb, runFc, text } from "../harness.js";

// user:<name>: a module's own invariant, called as prop({ def, rng, state, action }) at a state reached
// by a generated action prefix; it holds when it returns true, and fails when it returns false or a
// message, or throws.
export function userProperty(pname: string): PropertySpec {
  return {
    name: `user:${pname}`,
    summary: "declared by the module",
    run(sub, ctx) {
      const nA = sub.def.actions.length;
      const arb = fc.record({ seed: fc.nat({ max: 2 ** 31 - 1 }), actions: actionsArb(sub), action: fc.nat({ max: nA - 1 }) });
      return runFc(`user:${pname}`, sub, ctx, arb, ({ seed, actions, action }) => {
        const t = play(sub, seed, actions);
        const state = t.episode.state;
        let r: boolean | string;
        try {
          r = sub.def.properties![pname]({ def: sub.def, rng: createRng(`property/${seed}`), state, action });
        } catch (e) {
          throw new Violation(`${pname} threw at ${text(sub, state)}, ${sub.def.actions[action]}: ${(e as Error)?.message ?? String(e)}`);
        }
        if (r !== true) throw new Violation(`${pname} failed at ${text(sub, state)}, ${sub.def.actions[action]}${typeof r === "string" ? `: ${r}` : ""}`);
      });
    },
  };
}
