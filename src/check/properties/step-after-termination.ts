import { InputError } from "../../errors.js";
import { createRng } from "../../rng/rng.js";
import { checkStepResult } from "../../sim/compile.js";
import { play, Violation } from "../drive.js";
import { type PropertySpec, trajArb, runFc, stepCapOf, text } from "../harness.js";

// step-after-termination: play until the episode ends (padding actions cyclically). (a) The episode
// wrapper then refuses another step with "module.episodeOver". (b) If the environment terminated, it
// agrees with itself: stepping the raw environment from the state it terminated in either throws
// (refuses) or reports terminated=true again, for every action. An episode still running after the
// check's step cap (`--max-steps`, below a larger step limit) is not tested.
export const stepAfterTermination: PropertySpec = {
  name: "step-after-termination",
  summary: "stepping after the episode ended is refused; a terminal state stays terminal",
  run: (sub, ctx) =>
    runFc("step-after-termination", sub, ctx, trajArb(sub), ({ seed, actions }) => {
      const t = play(sub, seed, actions, { pad: true, maxSteps: stepCapOf(sub, ctx) });
      if (!t.episode.done) return;
      let refused = false;
      try {
        t.episode.step(0, t.rng);
      } catch (e) {
        if (e instanceof InputError && e.code === "module.episodeOver") refused = true;
        else throw e;
      }
      if (!refused) throw new Violation(`the episode wrapper accepted a step after the episode ended at step ${t.episode.t}`);
      const last = t.steps[t.steps.length - 1];
      if (!last || !last.terminated) return;
      for (let a = 0; a < sub.def.actions.length; a++) {
        let raw: unknown;
        try {
          raw = sub.def.step(last.state, a, createRng(`after/${seed}`));
        } catch {
          continue; // refused: fine
        }
        // Accepted: what it returned must be a step result like any other (checked as the episode wrapper does).
        const r = checkStepResult(sub.source, `step(${text(sub, last.state)}, ${sub.def.actions[a]}) after termination`, raw);
        if (r.terminated !== true) {
          throw new Violation(
            `the episode terminated at step ${last.t} in ${text(sub, last.state)}, but step(${text(sub, last.state)}, ${sub.def.actions[a]}) returned terminated=false (next ${text(sub, r.state)}): a terminal state must refuse (throw) or stay terminal`,
          );
        }
      }
    }),
};
