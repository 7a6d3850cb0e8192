import { play, Violation } from "../drive.js";
import { type PropertySpec, trajArb, runFc, text } from "../harness.js";

// features-declared-and-finite: every step's `features` is an object whose keys are all declared
// feature names and whose values are finite numbers.
export const featuresDeclared: PropertySpec = {
  name: "features-declared-and-finite",
  summary: "features are the declared ones and finite",
  run: (sub, ctx) =>
    runFc("features-declared-and-finite", sub, ctx, trajArb(sub), ({ seed, actions }) => {
      const t = play(sub, seed, actions);
      for (const st of t.steps) {
        const where = `step ${st.t} (${text(sub, st.from)}, ${sub.def.actions[st.action]})`;
        if (!st.features || typeof st.features !== "object") throw new Violation(`${where} returned features = ${String(st.features)}`);
        for (const [f, v] of Object.entries(st.features)) {
          if (!sub.def.features.includes(f)) throw new Violation(`${where} returned undeclared feature "${f}" (declared: ${sub.def.features.join(", ")})`);
          if (typeof v !== "number" || !Number.isFinite(v)) throw new Violation(`${where} returned feature "${f}" = ${String(v)}`);
        }
      }
    }),
};
