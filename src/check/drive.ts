/** Running trajectories of a check subject through the episode wrapper, and comparing outcomes. */
import type { Rng } from "../rng/rng.js";
import { createRng } from "../rng/rng.js";
import { type EnvDefinition, type StepResult } from "../sim/define.js";
import { canonicalJson } from "../util/canonical-json.js";
import { Episode, stateText, type EpisodeStep } from "../sim/episode.js";
import { checkedStarts, checkedTransitions, checkStepResult, guard } from "../sim/compile.js";
import type { CheckSubject } from "./subject.js";

/** A property violation: the message is the counterexample's explanation. */
export class Violation extends Error {
  constructor(message: string) {
    super(message);
    this.name = "Violation";
  }
}

export interface Trajectory<S> {
  start: S;
  steps: (EpisodeStep<S> & { action: number; from: S })[];
  episode: Episode<S>;
  rng: Rng;
}

export function stateKey<S>(def: EnvDefinition<S>, s: S): string {
  return def.key ? def.key(s) : canonicalJson(s);
}

/** Features with zeros dropped, sorted: the same transition gives the same text however it is written. */
export function featureKey(features: Record<string, number> | undefined): string {
  const f = features ?? {};
  return canonicalJson(Object.fromEntries(Object.keys(f).filter((k) => f[k] !== 0).sort().map((k) => [k, f[k]])));
}

/** The identity of one step's result (state reached, features, intent, termination). */
export function outcomeKey<S>(def: EnvDefinition<S>, r: Pick<StepResult<S>, "state" | "features" | "intent" | "terminated">): string {
  return canonicalJson([stateKey(def, r.state), featureKey(r.features), r.intent ?? 0, r.terminated === true]);
}

/**
 * Reset with `createRng("check/<seed>")` and play `actions`; stop at the episode's end. With `pad`,
 * keep playing actions 0, 1, 2, ... cyclically after the list runs out until the episode ends, or
 * until `maxSteps` steps (then `episode.done` is false).
 */
export function play<S>(subject: CheckSubject<S>, seed: number, actions: readonly number[], opts: { validate?: boolean; pad?: boolean; maxSteps?: number } = {}): Trajectory<S> {
  const rng = createRng(`check/${seed}`);
  const episode = new Episode(subject.def, { source: subject.source, validate: opts.validate ?? false });
  const start = episode.reset(rng);
  const steps: Trajectory<S>["steps"] = [];
  const nA = subject.def.actions.length;
  const maxSteps = opts.maxSteps ?? Infinity;
  for (let i = 0; !episode.done && i < maxSteps; i++) {
    if (i >= actions.length && !opts.pad) break;
    const a = i < actions.length ? actions[i] : i % nA;
    const from = episode.state;
    steps.push({ ...episode.step(a, rng), action: a, from });
  }
  return { start, steps, episode, rng };
}

export function describeActions(def: EnvDefinition<unknown>, actions: readonly number[]): string {
  return `[${actions.map((a) => def.actions[a] ?? String(a)).join(", ")}]`;
}

// The subject's own code called directly (outside the episode wrapper) by a property: every call goes
// through `guard` (a throw becomes one line naming the call) and every result through the checks the
// episode wrapper and the compiler make (`checkStepResult`), so a Promise, a missing state or a getter
// that throws ends the check with one clear line instead of a confusing counterexample.

/** `step(state, a)` of the subject, checked. */
export function stepChecked<S>(sub: CheckSubject<S>, state: S, a: number, rng: Rng): { state: S; features: Record<string, number>; intent?: number; terminated: boolean } {
  const what = `step(${stateText(sub.def as EnvDefinition<unknown>, state)}, ${sub.def.actions[a]})`;
  return checkStepResult<S>(sub.source, what, guard(sub.source, what, () => sub.def.step(state, a, rng)));
}

/** `reset()` of the subject through `guard`. */
export function resetChecked<S>(sub: CheckSubject<S>, rng: Rng): S {
  return guard(sub.source, "reset()", () => sub.def.reset(rng));
}

/** `starts()` of the subject, checked (the subject must have one). */
export function startsChecked<S>(sub: CheckSubject<S>): { state: S; p: number }[] {
  return checkedStarts(sub.def, sub.source);
}

/** `transitions(state, a)` of the subject, checked (the subject must have one). */
export function transitionsChecked<S>(sub: CheckSubject<S>, state: S, a: number) {
  return checkedTransitions(sub.def, state, a, sub.source, stateText(sub.def as EnvDefinition<unknown>, state));
}
