/** Policy helpers: one-hot and uniform policies, and the expected return from the start. */
import type { FiniteModel } from "../model/types.js";
import type { Policy } from "./sweeps.js";

/** One-hot policy from an action per state (terminal rows: uniform, never used). */
export function deterministicPolicy(model: FiniteModel, actions: Int32Array): Policy {
  const nA = model.nActions;
  const p = new Float64Array(model.nStates * nA);
  for (let s = 0; s < model.nStates; s++) {
    const a = actions[s];
    if (a >= 0) p[s * nA + a] = 1;
    else for (let b = 0; b < nA; b++) p[s * nA + b] = 1 / nA;
  }
  return p;
}

/** The uniform-random policy. */
export function uniformPolicy(model: FiniteModel): Policy {
  return new Float64Array(model.nStates * model.nActions).fill(1 / model.nActions);
}

/** Expected return from the start distribution: sum_s start(s) V(s). */
export function startValue(model: FiniteModel, values: Float64Array): number {
  let acc = 0;
  for (let s = 0; s < model.nStates; s++) if (model.start[s] > 0) acc += model.start[s] * values[s];
  return acc;
}
