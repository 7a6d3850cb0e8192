/**
 * What `gapwatch check` tests: every kind of environment seen through the simulator contract.
 * A module is checked as written (its own reset/step/transitions); a built-in scenario or model file
 * through `modelSimulator`, so every property runs the same code on every kind.
 */
import type { LoadedEnv } from "../env/types.js";
import type { FiniteModel } from "../model/types.js";
import type { EnvDefinition } from "../sim/define.js";
import { modelSimulator } from "../sim/model-sim.js";

export interface CheckSubject<S = unknown> {
  /** The `--env` text. */
  spec: string;
  kind: LoadedEnv["kind"];
  /** For messages: module path, model file or scenario name. */
  source: string;
  def: EnvDefinition<S>;
  /** The finite model, when the environment has one. */
  model?: FiniteModel;
  /** When there is a model: the simulator state behind each model state id. */
  states?: S[];
}

export function subjectOf(env: LoadedEnv, spec = env.spec): CheckSubject {
  if (env.kind === "module") {
    const h = env.simulator;
    return { spec, kind: env.kind, source: h.source, def: h.def, model: env.model, states: h.states };
  }
  const model = env.model;
  const def = modelSimulator(model) as EnvDefinition<unknown>;
  return { spec, kind: env.kind, source: model.source ?? spec, def, model, states: Array.from({ length: model.nStates }, (_, i) => i) };
}
