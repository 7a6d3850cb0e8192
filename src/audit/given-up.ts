/**
 * What the designer-optimal route gives up, for the regret picture: the states its most likely path
 * (from every start state) enters by a step whose expected intent is lower than that of every step of
 * the intent-optimal route from the same start — the cells it tramples, or the risks it runs, that the
 * intended behaviour avoids. Pure.
 */
import { tracePolicy } from "../model/likely-path.js";
import type { FiniteModel } from "../model/types.js";
import { expectedReward } from "../solve/sweeps.js";

/** Start states (positive start probability), in state order. */
export function startStates(model: FiniteModel): number[] {
  const out: number[] = [];
  for (let s = 0; s < model.nStates; s++) if (model.start[s] > 0) out.push(s);
  return out;
}

export function givenUpStates(model: FiniteModel, designerPolicy: Int32Array, intentPolicy: Int32Array): number[] {
  const q = expectedReward(model, model.intent);
  const nA = model.nActions;
  const out = new Set<number>();
  for (const s0 of startStates(model)) {
    const good = tracePolicy(model, intentPolicy, s0);
    let floor = Infinity;
    for (let t = 0; t < good.actions.length; t++) floor = Math.min(floor, q[good.states[t] * nA + good.actions[t]]);
    if (!Number.isFinite(floor)) floor = 0;
    const bad = tracePolicy(model, designerPolicy, s0);
    const tol = 1e-9 * (1 + Math.abs(floor));
    // Mark the cell the step enters (its most likely outcome): the trampled cell, or the risky plate.
    for (let t = 0; t < bad.actions.length; t++) if (q[bad.states[t] * nA + bad.actions[t]] < floor - tol) out.add(bad.states[t + 1] ?? bad.states[t]);
  }
  return [...out];
}
