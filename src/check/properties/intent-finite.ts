import { play, Violation } from "../drive.js";
import { type PropertySpec, trajArb, runFc, text } from "../harness.js";

// intent-finite: every step's intent is absent (0) or a finite number.
export const intentFinite: PropertySpec = {
  name: "intent-finite",
  summary: "intent increments are finite numbers",
  run: (sub, ctx) =>
    runFc("intent-finite", sub, ctx, trajArb(sub), ({ seed, actions }) => {
      const t = play(sub, seed, actions);
      for (const st of t.steps) {
        if (typeof st.intent !== "number" || !Number.isFinite(st.intent)) {
          throw new Violation(`step ${st.t} (${text(sub, st.from)}, ${sub.def.actions[st.action]}) returned intent = ${String(st.intent)}`);
        }
      }
    }),
};
