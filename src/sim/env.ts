/**
 * A simulator module as a `TabularEnv` for learners: states get integer ids as they are discovered
 * (by key), the designer reward is the variant's weighted sum of the step's features, and intent is
 * dropped here (only the compiled model, src/sim/compile.ts, carries it to the monitor).
 */
import { InputError } from "../errors.js";
import type { StepOut, TabularEnv } from "../model/learner-view.js";
import type { Rng } from "../rng/rng.js";
import { checkNumbers, guard } from "./compile.js";
import { DEFAULT_MODULE_HORIZON, type EnvDefinition } from "./define.js";
import { canonicalJson } from "../util/canonical-json.js";

export interface ModuleEnv<S> extends TabularEnv {
  /** The state behind an id (for the monitor's rollouts). */
  stateOf(id: number): S;
  idOf(state: S): number;
  /** The id of a state already discovered, or -1 (discovers nothing). */
  findId(state: S): number;
}

export function moduleTabularEnv<S>(def: EnvDefinition<S>, weights: Record<string, number>, source: string): ModuleEnv<S> {
  const ids = new Map<string, number>();
  const states: S[] = [];
  const w = def.features.map((f) => ownValue(weights, f) ?? 0);
  let steps = 0;
  const idOf = (s: S): number => {
    const k = def.key ? def.key(s) : canonicalJson(s);
    let id = ids.get(k);
    if (id === undefined) {
      id = states.length;
      ids.set(k, id);
      states.push(s);
    }
    return id;
  };
  const obsDim = def.observe ? guard(source, "observe()", () => def.observe!(def.reset(createProbe()))).length : undefined;
  return {
    name: def.name,
    nActions: def.actions.length,
    actions: def.actions,
    horizon: def.horizon ?? DEFAULT_MODULE_HORIZON,
    stateCapacity: () => Math.max(16, states.length),
    reset: (rng: Rng) => idOf(guard(source, "reset()", () => def.reset(rng))),
    step(s: number, a: number, rng: Rng, out: StepOut) {
      steps++;
      if (a < 0 || a >= def.actions.length || !Number.isInteger(a)) throw new InputError("module.action", `invalid action ${a}`, source);
      const what = `step ${steps} (state ${canonicalJson(states[s])}, action ${def.actions[a]})`;
      // Every read of the module's result happens inside guard: a throwing getter is the module's error.
      const { next, reward, terminated } = guard(source, what, () => {
        const r = def.step(states[s], a, rng);
        checkNumbers(source, `step ${steps}`, r.features, r.intent, def.features);
        let reward = 0;
        for (let f = 0; f < w.length; f++) if (w[f] !== 0) reward += w[f] * (ownValue(r.features, def.features[f]) ?? 0);
        return { next: r.state, reward, terminated: Boolean(r.terminated) };
      });
      out.next = idOf(next);
      out.reward = reward;
      out.terminated = terminated;
    },
    obsDim,
    observe: def.observe
      ? (s: number, out: Float64Array) => {
          const o = def.observe!(states[s]);
          for (let i = 0; i < o.length; i++) out[i] = o[i];
        }
      : undefined,
    stateOf: (id: number) => states[id],
    idOf,
    findId: (s: S) => ids.get(def.key ? def.key(s) : canonicalJson(s)) ?? -1,
  };
}

import { createRng } from "../rng/rng.js";
import { ownValue } from "../util/own.js";
function createProbe(): Rng {
  return createRng("observe-probe");
}
