import { canonicalJson } from "../../util/canonical-json.js";
import { featureKey, play, stateKey, Violation } from "../drive.js";
import type { CheckSubject } from "../subject.js";
import { type PropertySpec, type S, trajArb, runFc } from "../harness.js";

// determinism: for every seed and action sequence, two episodes from fresh generators with that seed
// give identical trajectories: same start key, and per step the same state key, features, intent,
// termination and observation.
function record(sub: CheckSubject<S>, seed: number, actions: number[]): string[] {
  const t = play(sub, seed, actions);
  const obs = (s: S) => (sub.def.observe ? canonicalJson(sub.def.observe(s)) : "");
  const out = [`start ${stateKey(sub.def, t.start)} ${obs(t.start)}`];
  for (const st of t.steps) out.push(`state ${stateKey(sub.def, st.state)} features ${featureKey(st.features)} intent ${st.intent} terminated ${st.terminated} ${obs(st.state)}`);
  return out;
}
export const determinism: PropertySpec = {
  name: "determinism",
  summary: "same seed and action sequence give an identical trajectory",
  run: (sub, ctx) =>
    runFc("determinism", sub, ctx, trajArb(sub), ({ seed, actions }) => {
      const a = record(sub, seed, actions);
      const b = record(sub, seed, actions);
      for (let i = 0; i < Math.max(a.length, b.length); i++) {
        if (a[i] !== b[i]) throw new Violation(`two runs with seed ${seed} differ at step ${i}: first ${a[i] ?? "(ended)"}; second ${b[i] ?? "(ended)"}`);
      }
    }),
};
