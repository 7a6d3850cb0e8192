/**
 * A compiled FiniteModel seen through the simulator contract, so `gapwatch check` runs every property
 * the same way on built-in scenarios, model files and modules. States are model state ids; `step`
 * samples one outcome (src/model/sampler.ts: one `rng.float()`, none when the pair has a single outcome), `transitions`
 * lists the model's outcomes exactly. A terminal state is absorbing (it stays terminal, no features,
 * no intent), and an invalid action is refused.
 */
import { InputError } from "../errors.js";
import { sampleOutcome, samplingTables, sampleStart } from "../model/sampler.js";
import type { FiniteModel } from "../model/types.js";
import type { EnvDefinition, Outcome } from "./define.js";
import { emptyDict } from "../util/own.js";

export function modelSimulator(model: FiniteModel): EnvDefinition<number> {
  const nA = model.nActions;
  const nF = model.features.length;
  const src = model.source ?? model.name;
  const featuresOf = (o: number): Record<string, number> => {
    const f = emptyDict<number>();
    for (let j = 0; j < nF; j++) {
      const v = model.featureValues[o * nF + j];
      if (v !== 0) f[model.features[j]] = v;
    }
    return f;
  };
  const checkArgs = (s: number, a: number) => {
    if (!(Number.isInteger(s) && s >= 0 && s < model.nStates)) throw new InputError("module.state", `unknown state ${String(s)}`, src);
    if (!(Number.isInteger(a) && a >= 0 && a < nA)) throw new InputError("module.action", `invalid action ${String(a)}; expected an integer 0..${nA - 1}`, src);
  };
  const starts: { state: number; p: number }[] = [];
  for (let s = 0; s < model.nStates; s++) if (model.start[s] > 0) starts.push({ state: s, p: model.start[s] });
  const tables = samplingTables(model);
  const obs = model.observations;
  return {
    name: model.name,
    actions: model.actions,
    features: model.features,
    horizon: model.horizon,
    gamma: model.gamma,
    reset: (rng) => sampleStart(tables, rng),
    step(s, a, rng) {
      checkArgs(s, a);
      if (model.terminal[s] === 1) return { state: s, features: {}, intent: 0, terminated: true };
      const o = sampleOutcome(tables, s, a, rng);
      const next = model.next[o];
      return { state: next, features: featuresOf(o), intent: model.intent[o], terminated: model.terminal[next] === 1 };
    },
    key: (s) => model.stateLabels[s] ?? String(s),
    observe: obs
      ? (s) => Array.from(obs.values.subarray(s * obs.dim, (s + 1) * obs.dim))
      : undefined,
    transitions(s, a): Outcome<number>[] {
      checkArgs(s, a);
      if (model.terminal[s] === 1) return [{ state: s, features: {}, intent: 0, terminated: true, p: 1 }];
      const k = s * nA + a;
      const out: Outcome<number>[] = [];
      for (let o = model.saStart[k]; o < model.saStart[k + 1]; o++) {
        const next = model.next[o];
        out.push({ state: next, p: model.prob[o], features: featuresOf(o), intent: model.intent[o], terminated: model.terminal[next] === 1 });
      }
      return out;
    },
    starts: () => starts.map((x) => ({ ...x })),
    rewards: model.variants ? Object.fromEntries(Object.entries(model.variants).map(([n, v]) => [n, { weights: v.weights }])) : undefined,
    description: model.description,
  };
}
