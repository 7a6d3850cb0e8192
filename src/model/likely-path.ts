/**
 * The most likely path of a deterministic policy through a model: from the most likely start state,
 * follow the most likely outcome of the policy's action (lowest index on ties). One home for the
 * audit checks (evidence routes, src/audit/checks) and the route pictures (src/report/terminal.ts,
 * the HTML run report). Pure.
 */
import type { FiniteModel } from "./types.js";

/** The most likely start state (lowest index on ties). */
export function likelyStart(model: FiniteModel): number {
  let s = 0;
  for (let i = 1; i < model.nStates; i++) if (model.start[i] > model.start[s]) s = i;
  return s;
}

/** Most likely outcome of (s, a) (lowest index on ties). */
export function likelyOutcome(model: FiniteModel, s: number, a: number): number {
  const k = s * model.nActions + a;
  let best = model.saStart[k];
  for (let o = best + 1; o < model.saStart[k + 1]; o++) if (model.prob[o] > model.prob[best]) best = o;
  return best;
}

export interface PathTrace {
  states: number[];
  actions: number[];
  outcomes: number[];
  /** Index into `states` where the path starts repeating (a recurrent loop), or -1 if it ended. */
  loopStart: number;
}

/**
 * The most likely path of a deterministic policy from state `s0`: follow the most likely outcome until
 * a terminal, the step limit, or a repeated state (then `loopStart` marks the first visit of it).
 */
export function tracePolicy(model: FiniteModel, actions: Int32Array, s0: number, maxSteps = model.horizon): PathTrace {
  const states = [s0];
  const acts: number[] = [];
  const outs: number[] = [];
  const firstAt = new Map<number, number>([[s0, 0]]);
  let s = s0;
  for (let t = 0; t < maxSteps && !model.terminal[s]; t++) {
    const a = actions[s];
    if (a < 0) break;
    const o = likelyOutcome(model, s, a);
    acts.push(a);
    outs.push(o);
    s = model.next[o];
    const seen = firstAt.get(s);
    if (seen !== undefined) return { states, actions: acts, outcomes: outs, loopStart: seen };
    firstAt.set(s, states.length);
    states.push(s);
  }
  return { states, actions: acts, outcomes: outs, loopStart: -1 };
}

/**
 * The most likely path of a deterministic policy from the most likely start state, for drawing: like
 * `tracePolicy`, but a loop is walked until some state is entered a third time (a loop drawn once
 * round is enough), and no outcomes are kept.
 */
export function likelyPath(model: FiniteModel, policy: Int32Array, maxSteps = model.horizon): { states: number[]; actions: number[] } {
  let s = likelyStart(model);
  const states = [s];
  const actions: number[] = [];
  const seen = new Map<number, number>();
  for (let t = 0; t < maxSteps && !model.terminal[s]; t++) {
    const a = policy[s];
    if (a < 0) break;
    actions.push(a);
    s = model.next[likelyOutcome(model, s, a)];
    states.push(s);
    const count = (seen.get(s) ?? 0) + 1;
    seen.set(s, count);
    if (count > 2) break; // a loop: shown once is enough
  }
  return { states, actions };
}
