import fc from "fast-check";
import { createRng } from "../../rng/rng.js";
import { canonicalJson } from "../../util/canonical-json.js";
import { stateKey, Violation } from "../drive.js";
import { type PropertySpec, runFc } from "../harness.js";

// reset-valid: for every seed, reset() returns a state (not undefined/null) whose key() is a string;
// observe() of it (if declared) is an array of finite numbers of the same length as for every other
// state seen; with starts() its key is one of the listed start states with p > 0; with a finite model
// it is a start state of the model and not terminal.
export const resetValid: PropertySpec = {
  name: "reset-valid",
  summary: "reset returns a valid start state",
  run(sub, ctx) {
    const def = sub.def;
    let dim: number | undefined;
    const modelStarts = new Map<string, { p: number; terminal: boolean }>();
    if (sub.model) sub.model.stateLabels.forEach((l, i) => modelStarts.set(l, { p: sub.model!.start[i], terminal: sub.model!.terminal[i] === 1 }));
    const declared = def.starts ? new Set(def.starts().filter((x) => x.p > 0).map((x) => stateKey(def, x.state))) : null;
    return runFc("reset-valid", sub, ctx, fc.record({ seed: fc.nat({ max: 2 ** 31 - 1 }) }), ({ seed }) => {
      const s = def.reset(createRng(`check/${seed}`));
      if (s === undefined || s === null) throw new Violation(`reset() returned ${String(s)}`);
      const k = stateKey(def, s);
      if (typeof k !== "string") throw new Violation(`key(reset state) returned ${typeof k}, expected a string`);
      if (declared && !declared.has(k)) throw new Violation(`reset() returned ${k}, which is not one of the start states listed by starts(): ${[...declared].slice(0, 5).join(", ")}`);
      if (sub.model) {
        const m = modelStarts.get(k);
        if (!m) throw new Violation(`reset() returned ${k}, which is not a state of the finite model`);
        if (!(m.p > 0)) throw new Violation(`reset() returned ${k}, which has start probability 0 in the finite model`);
        if (m.terminal) throw new Violation(`reset() returned ${k}, a terminal state`);
      }
      if (def.observe) {
        const o = def.observe(s);
        if (!Array.isArray(o) || !o.every((x) => typeof x === "number" && Number.isFinite(x))) throw new Violation(`observe(${k}) = ${canonicalJson(o)}; expected an array of finite numbers`);
        if (dim === undefined) dim = o.length;
        else if (o.length !== dim) throw new Violation(`observe(${k}) has ${o.length} entries, another start state had ${dim}`);
      }
    });
  },
};
