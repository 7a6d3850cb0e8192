/**
 * What a learner may see of a model: dynamics, the designer reward of one variant, terminal flags,
 * observations. No intent: this module must never import or copy `model.intent`, and a test checks
 * that no key of a LearnerView holds it.
 *
 * `TabularEnv` is the one interface tabular and linear learners step. `viewEnv` implements it over a
 * compiled model with no allocation per step (sampling: sampler.ts); simulator modules implement it too.
 */
import type { Rng } from "../rng/rng.js";
import { sampleOutcome, samplingTables, sampleStart } from "./sampler.js";
import type { FiniteModel } from "./types.js";

/** The sampler (sampler.ts), re-exported: learners (policies/) import from this module only. */
export { sampleOutcome, sampleStart };

export interface LearnerView {
  readonly name: string;
  readonly nStates: number;
  readonly nActions: number;
  readonly actions: readonly string[];
  readonly horizon: number;
  readonly terminal: Uint8Array;
  readonly saStart: Int32Array;
  readonly next: Int32Array;
  /** Cumulative probability within each (s, a) outcome range; the last entry of each range is 1. */
  readonly cumProb: Float64Array;
  /** Designer reward per outcome. */
  readonly reward: Float64Array;
  /** Start states with positive probability and their cumulative probabilities. */
  readonly startStates: Int32Array;
  readonly startCum: Float64Array;
  readonly observations?: FiniteModel["observations"];
}

export function learnerView(model: FiniteModel, reward: Float64Array): LearnerView {
  const { cumProb, startStates, startCum } = samplingTables(model);
  return {
    name: model.name,
    nStates: model.nStates,
    nActions: model.nActions,
    actions: model.actions,
    horizon: model.horizon,
    terminal: model.terminal,
    saStart: model.saStart,
    next: model.next,
    cumProb,
    reward,
    startStates,
    startCum,
    observations: model.observations,
  };
}

/** Result of one step, written into a caller-owned object (no allocation per step). */
export interface StepOut {
  next: number;
  reward: number;
  terminated: boolean;
}

/**
 * The environment interface learners step. States are small integers (tabular keys); `observe`
 * writes a numeric observation for function approximation. The time limit is not the environment's:
 * learners truncate at `horizon` themselves (truncated, not terminated).
 */
export interface TabularEnv {
  readonly name: string;
  readonly nActions: number;
  readonly actions: readonly string[];
  readonly horizon: number;
  /** Upper bound on state ids (size for Q tables); may grow for discovered-state environments. */
  stateCapacity(): number;
  reset(rng: Rng): number;
  step(s: number, a: number, rng: Rng, out: StepOut): void;
  readonly obsDim?: number;
  observe?(s: number, out: Float64Array): void;
}

/** A TabularEnv over a compiled model's learner view. */
export function viewEnv(view: LearnerView): TabularEnv & { readonly view: LearnerView } {
  const obs = view.observations;
  return {
    view,
    name: view.name,
    nActions: view.nActions,
    actions: view.actions,
    horizon: view.horizon,
    stateCapacity: () => view.nStates,
    reset: (rng) => sampleStart(view, rng),
    step(s, a, rng, out) {
      const o = sampleOutcome(view, s, a, rng);
      const sp = view.next[o];
      out.next = sp;
      out.reward = view.reward[o];
      out.terminated = view.terminal[sp] === 1;
    },
    obsDim: obs?.dim,
    observe: obs
      ? (s, out) => {
          const base = s * obs.dim;
          for (let i = 0; i < obs.dim; i++) out[i] = obs.values[base + i];
        }
      : undefined,
  };
}
