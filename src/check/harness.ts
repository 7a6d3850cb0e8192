/**
 * The harness shared by the conformance properties of `gapwatch check` (./properties/): property
 * types, the generated-input arbitraries, and `runFc`, which runs one fast-check property and turns its
 * outcome into a PropertyResult (a fatal module error ends the whole check).
 */
import fc from "fast-check";
import { GapwatchError } from "../errors.js";
import type { EnvDefinition, Outcome } from "../sim/define.js";
import { stateText } from "../sim/episode.js";
import { outcomeKey } from "./drive.js";
import type { CheckSubject } from "./subject.js";

export interface PropertyContext {
  runs: number;
  seed: number;
  /** fast-check replay path (with `--replay`). */
  path?: string;
  /** Most steps one padded episode is played for (default DEFAULT_CHECK_STEPS): the wait is bounded by runs x this. */
  maxSteps?: number;
}

/** Default per-episode step cap of the padded episodes (`check --max-steps`). */
export const DEFAULT_CHECK_STEPS = 10_000;

/** Horizons above this are refused before any work (a step limit no episode of a check can reach). */
export const MAX_CHECK_HORIZON = 100_000_000;

/** The environment's step limit (the episode wrapper's truncation). */
export const stepLimitOf = (sub: CheckSubject<S>): number => sub.def.horizon ?? sub.model?.horizon ?? 200;

/** Steps a padded episode is played for at most: the step limit, or the check's cap when that is lower. */
export const stepCapOf = (sub: CheckSubject<S>, ctx: PropertyContext): number => Math.min(stepLimitOf(sub), ctx.maxSteps ?? DEFAULT_CHECK_STEPS);

export interface PropertyResult {
  name: string;
  status: "passed" | "failed" | "skipped";
  runs: number;
  /** Why skipped, or a note on what was tested. */
  note?: string;
  counterexample?: { input: unknown; message: string };
  /** fast-check's path to the shrunk counterexample (replay with --seed and --replay). */
  path?: string;
}

export type S = unknown;
export interface TrajInput {
  seed: number;
  actions: number[];
}

export interface PropertySpec {
  name: string;
  summary: string;
  run(subject: CheckSubject<S>, ctx: PropertyContext): PropertyResult;
}

export const horizonOf = (sub: CheckSubject<S>) => Math.min(stepLimitOf(sub), 1000);

export function actionsArb(sub: CheckSubject<S>, maxLength = horizonOf(sub)) {
  return fc.array(fc.nat({ max: sub.def.actions.length - 1 }), { maxLength, size: "max" });
}
export function trajArb(sub: CheckSubject<S>) {
  return fc.record({ seed: fc.nat({ max: 2 ** 31 - 1 }), actions: actionsArb(sub) });
}

/** Describe an input for people: actions by name. */
export function showInput(sub: CheckSubject<S>, v: unknown): unknown {
  const fix = (x: unknown): unknown => {
    if (x && typeof x === "object" && !Array.isArray(x)) {
      const o = x as Record<string, unknown>;
      const out: Record<string, unknown> = {};
      for (const [k, val] of Object.entries(o)) {
        const names = (xs: number[]) => xs.map((a) => sub.def.actions[a] ?? String(a));
        out[k] =
          k === "actions" && Array.isArray(val)
            ? names(val as number[])
            : k === "episodes" && Array.isArray(val)
              ? (val as number[][]).map(names)
              : typeof val === "number" && !Number.isFinite(val)
                ? String(val)
                : val;
      }
      return out;
    }
    return x;
  };
  return fix(v);
}

/** Errors from user code that no property expects end the whole check (exit 2). */
function isFatal(e: unknown): e is GapwatchError {
  return e instanceof GapwatchError && (e.code === "module.threw" || e.code === "module.reset" || e.code === "module.result");
}

/**
 * Run one fast-check property. `pred` throws a Violation for a counterexample; a fatal module error is
 * shrunk like a violation and then rethrown. `skip()` may turn a vacuous pass into "skipped".
 */
export function runFc<T>(
  name: string,
  sub: CheckSubject<S>,
  ctx: PropertyContext,
  arb: fc.Arbitrary<T>,
  pred: (v: T) => void,
  extra: { skip?: () => string | undefined; note?: () => string | undefined; runs?: number } = {},
): PropertyResult {
  const numRuns = extra.runs ?? ctx.runs;
  const details = fc.check(
    fc.property(arb, (v) => {
      pred(v);
    }),
    { seed: ctx.seed, numRuns, path: ctx.path, endOnFailure: ctx.path !== undefined },
  );
  if (details.failed) {
    const err = details.errorInstance;
    if (isFatal(err)) throw err;
    const message = err instanceof Error ? err.message : String(err);
    return {
      name,
      status: "failed",
      runs: details.numRuns,
      counterexample: { input: showInput(sub, details.counterexample?.[0]), message },
      path: details.counterexamplePath ?? undefined,
    };
  }
  const skip = extra.skip?.();
  if (skip) return { name, status: "skipped", runs: details.numRuns, note: skip };
  return { name, status: "passed", runs: details.numRuns, note: extra.note?.() };
}

/** A one-shot failure found without generated input (a whole-model check). */
export function failedStatic(name: string, input: unknown, message: string): PropertyResult {
  return { name, status: "failed", runs: 1, counterexample: { input, message } };
}

export const text = (sub: CheckSubject<S>, s: unknown) => stateText(sub.def as EnvDefinition<unknown>, s);

/** Total probability per distinct outcome (outcomes with the same key are merged). */
export function groups(sub: CheckSubject<S>, outs: Outcome<S>[]): Map<string, number> {
  const g = new Map<string, number>();
  for (const o of outs) {
    const k = outcomeKey(sub.def, o);
    g.set(k, (g.get(k) ?? 0) + o.p);
  }
  return g;
}

/** A finite model with one start state and one outcome per state-action pair. */
export function modelIsDeterministic(sub: CheckSubject<S>): boolean {
  const m = sub.model!;
  let starts = 0;
  for (let s = 0; s < m.nStates; s++) if (m.start[s] > 0) starts++;
  if (starts > 1) return false;
  for (let k = 0; k < m.nStates * m.nActions; k++) if (m.saStart[k + 1] - m.saStart[k] > 1) return false;
  return true;
}
