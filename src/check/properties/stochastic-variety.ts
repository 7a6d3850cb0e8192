import { createRng } from "../../rng/rng.js";
import { outcomeKey, play, resetChecked, startsChecked, stateKey, stepChecked, transitionsChecked, Violation } from "../drive.js";
import { groups, modelIsDeterministic, type PropertySpec, trajArb, runFc, text } from "../harness.js";

/** stochastic-variety: chance of a false alarm per tested pair is at most this. */
export const VARIETY_FALSE_ALARM = 1e-9;

// stochastic-variety: where the environment declares randomness (transitions() with two or more
// distinct outcomes for a reached pair, or starts() with two or more states), sampling that step
// (or reset) with N different seeds gives at least two distinct results. N is chosen so that a
// correct environment fails with probability <= 1e-9: N = ceil(ln 1e-9 / ln pmax) + 1, at most 20000.
function drawsFor(pmax: number): number {
  if (pmax >= 1) return 0;
  return Math.min(20000, Math.ceil(Math.log(VARIETY_FALSE_ALARM) / Math.log(pmax)) + 1);
}
export const stochasticVariety: PropertySpec = {
  name: "stochastic-variety",
  summary: "different seeds do not all give the same result where the environment is stochastic",
  run(sub, ctx) {
    const name = "stochastic-variety";
    if (sub.model && modelIsDeterministic(sub)) return { name, status: "skipped", runs: 0, note: "deterministic: every reachable step has one outcome and there is one start state" };
    if (!sub.def.transitions && !sub.def.starts) return { name, status: "skipped", runs: 0, note: "no transitions() or starts(): the module does not declare whether it is random" };
    let tested = 0;
    const def = sub.def;
    let startsDone = false;
    return runFc(
      name,
      sub,
      ctx,
      trajArb(sub),
      ({ seed, actions }) => {
        if (def.starts && !startsDone) {
          startsDone = true;
          const g = new Map<string, number>();
          for (const st of startsChecked(sub)) g.set(stateKey(def, st.state), (g.get(stateKey(def, st.state)) ?? 0) + st.p);
          if (g.size > 1) {
            tested++;
            const n = drawsFor(Math.max(...g.values()));
            const seen = new Set<string>();
            for (let i = 0; i < n && seen.size < 2; i++) seen.add(stateKey(def, resetChecked(sub, createRng(`variety/${seed}/reset/${i}`))));
            if (seen.size < 2) throw new Violation(`starts() lists ${g.size} start states but reset() gave ${[...seen][0]} for all ${n} seeds`);
          }
        }
        if (!def.transitions) return;
        const t = play(sub, seed, actions);
        for (const st of t.steps) {
          const g = groups(sub, transitionsChecked(sub, st.from, st.action));
          if (g.size < 2) continue;
          tested++;
          const n = drawsFor(Math.max(...g.values()));
          const seen = new Set<string>();
          for (let i = 0; i < n && seen.size < 2; i++) seen.add(outcomeKey(def, stepChecked(sub, st.from, st.action, createRng(`variety/${seed}/${i}`))));
          if (seen.size < 2) {
            throw new Violation(`transitions(${text(sub, st.from)}, ${def.actions[st.action]}) lists ${g.size} distinct outcomes but step() gave the same result for all ${n} seeds: ${[...seen][0]}`);
          }
          return;
        }
      },
      { skip: () => (tested === 0 ? `no stochastic step reached in ${ctx.runs} runs` : undefined), note: () => `${tested} stochastic pairs tested` },
    );
  },
};
