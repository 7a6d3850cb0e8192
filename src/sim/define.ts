/**
 * The contract for bring-your-own environments. A user module default-exports `defineEnv({...})`:
 *
 *   import { defineEnv } from "gapwatch";
 *   export default defineEnv({
 *     name: "pump-station", actions: ["idle", "pump"], features: ["pumped"], horizon: 50,
 *     reset: () => ({ level: 0 }),
 *     step: (s, a, rng) => ({ state: { level: s.level + a }, features: { pumped: a }, intent: ..., terminated: s.level + a >= 5 }),
 *   });
 *
 * `reset` and `step` take the state and an explicit seeded `Rng`; they must be pure functions of their
 * arguments (the same seed and actions give the same trajectory; `gapwatch check` tests this).
 * Optional parts:
 *  - `key(state)`: the state's identity for tabular learners (default: canonical JSON);
 *  - `observe(state)`: what a learner sees as numbers (default: none; tabular learners see only the key);
 *  - `transitions(state, action)`: the exact outcome distribution of a step; with it (and `starts`) the
 *    module is compiled to a finite model (bounded by `--max-states`), so solve, audit and exact
 *    evaluation work; without it a deterministic module is still compiled by probing `step`;
 *  - `starts()`: the exact start distribution (default: `reset` is deterministic);
 *  - `finite: false` to skip compilation: `train` then scores checkpoints by Monte Carlo rollouts
 *    through `step` (`--eval mc`), normalized with `ranges` or the `--designer-range`/`--intent-range` flags;
 *  - `ranges`: `{ designer?: { low, high }, intent?: { low, high } }`, the discounted returns of a
 *    uniformly random policy (low) and of an optimal/intended one (high), for normalizing a `finite: false`
 *    module's scores (the flags override them);
 *  - `rewards`: reward variants (weights over `features`);
 *  - `properties`: the module's own invariants, run by `gapwatch check`;
 *  - `layouts(n)`: makes the module a layout family: given a layout number n >= 1 it returns the
 *    definition of that layout (a pure function of n; draw positions from `createRng(n)`-like seeded
 *    streams, never an unseeded global source); layout 0 is the default export itself. `--layout N` picks one.
 * The learner-facing view built from a module exposes no intent.
 */
import type { Rng } from "../rng/rng.js";

export interface StepResult<S> {
  state: S;
  /** Designer-reward feature values of this transition (missing features are 0). */
  features: Record<string, number>;
  /** Intended-outcome increment of this transition (held out from learners). Default 0. */
  intent?: number;
  /** The task ended (not a time limit: time limits are the harness's `horizon`). */
  terminated: boolean;
}

export interface Outcome<S> extends StepResult<S> {
  p: number;
}

/** A user-declared invariant: given a fresh seeded run of the env, return true (holds) or a message. */
export type EnvProperty<S> = (ctx: { def: EnvDefinition<S>; rng: Rng; state: S; action: number }) => boolean | string;

export interface EnvDefinition<S = unknown> {
  name: string;
  actions: readonly string[];
  features: readonly string[];
  /** Episode step limit (a truncation applied by the harness). Default 200. */
  horizon?: number;
  /** Discount used for exact evaluation and audits. Default 0.99. */
  gamma?: number;
  reset(rng: Rng): S;
  step(state: S, action: number, rng: Rng): StepResult<S>;
  key?(state: S): string;
  observe?(state: S): number[];
  transitions?(state: S, action: number): Outcome<S>[];
  starts?(): { state: S; p: number }[];
  finite?: boolean;
  ranges?: { designer?: ScoreRange; intent?: ScoreRange };
  rewards?: Record<string, { weights: Record<string, number> }>;
  properties?: Record<string, EnvProperty<S>>;
  description?: string;
  /** Layout family: the definition of layout n >= 1 (layout 0 is this definition). */
  layouts?: (n: number) => EnvDefinition<S>;
}

/** Normalization references: the score of a uniformly random policy (low) and an optimal one (high). */
export interface ScoreRange {
  low: number;
  high: number;
}

/** Identity helper that gives a module's definition its types. */
export function defineEnv<S>(def: EnvDefinition<S>): EnvDefinition<S> {
  return def;
}

export const DEFAULT_MODULE_HORIZON = 200;
export const DEFAULT_MODULE_GAMMA = 0.99;
export const DEFAULT_MAX_STATES = 100_000;
