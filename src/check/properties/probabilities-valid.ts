import { play, Violation } from "../drive.js";
import { type PropertySpec, trajArb, runFc, failedStatic, text } from "../harness.js";

/** Probabilities must sum to 1 within this. */
export const PROBABILITY_TOLERANCE = 1e-9;

// probabilities-valid: with a finite model, every state-action pair's outcome probabilities are in
// (0, 1] and sum to 1 within 1e-9, and so does the start distribution (checked over the whole model).
// With transitions()/starts(): at every state reached, for every action, transitions() returns a
// non-empty list whose p are finite, in (0, 1], summing to 1 within 1e-9; the same for starts().
function checkList(where: string, ps: number[]): string | undefined {
  if (ps.length === 0) return `${where} returned no outcomes`;
  for (const p of ps) if (typeof p !== "number" || !Number.isFinite(p) || p <= 0 || p > 1) return `${where} has an outcome with p = ${String(p)}; probabilities must be in (0, 1]`;
  const sum = ps.reduce((a, b) => a + b, 0);
  if (Math.abs(sum - 1) > PROBABILITY_TOLERANCE) return `${where} probabilities sum to ${sum}, expected 1 (within ${PROBABILITY_TOLERANCE})`;
  return undefined;
}
export const probabilitiesValid: PropertySpec = {
  name: "probabilities-valid",
  summary: "outcome and start probabilities are in (0, 1] and sum to 1",
  run(sub, ctx) {
    const name = "probabilities-valid";
    const m = sub.model;
    if (m) {
      for (let s = 0; s < m.nStates; s++) {
        for (let a = 0; a < m.nActions; a++) {
          const k = s * m.nActions + a;
          const msg = checkList(`(${m.stateLabels[s]}, ${m.actions[a]})`, Array.from(m.prob.subarray(m.saStart[k], m.saStart[k + 1])));
          if (msg) return failedStatic(name, { state: m.stateLabels[s], action: m.actions[a] }, msg);
        }
      }
      const msg = checkList("start distribution", Array.from(m.start).filter((p) => p !== 0));
      if (msg) return failedStatic(name, { start: true }, msg);
    }
    const def = sub.def;
    if (!def.transitions && !def.starts) {
      return m ? { name, status: "passed", runs: 1, note: "whole model checked" } : { name, status: "skipped", runs: 0, note: "no transitions(), starts() or finite model" };
    }
    if (def.starts) {
      const msg = checkList("starts()", def.starts().map((x) => x.p));
      if (msg) return failedStatic(name, { starts: true }, msg);
    }
    if (!def.transitions) return { name, status: "passed", runs: 1 };
    return runFc(name, sub, ctx, trajArb(sub), ({ seed, actions }) => {
      const t = play(sub, seed, actions);
      const states = [t.start, ...t.steps.filter((s) => !s.terminated).map((s) => s.state)];
      for (const s of states) {
        for (let a = 0; a < def.actions.length; a++) {
          const outs = def.transitions!(s, a);
          const where = `transitions(${text(sub, s)}, ${def.actions[a]})`;
          if (!Array.isArray(outs)) throw new Violation(`${where} returned ${typeof outs}, expected a list of outcomes`);
          const msg = checkList(where, outs.map((o) => o.p));
          if (msg) throw new Violation(msg);
        }
      }
    });
  },
};
