/**
 * Sampling a compiled model: one start state, one outcome of a (state, action) pair. The one sampler
 * behind the learner's environment (learner-view.ts), the simulator view of a model
 * (src/sim/model-sim.ts) and the Monte Carlo evaluation of the monitor (src/monitor/evaluate.ts).
 *
 * Draws (part of every seeded result, so fixed): one `rng.float()` u per sample, none when there is a
 * single start state or the pair has a single outcome; the sample is the first entry whose cumulative
 * probability (summed in index order) exceeds u, else the last entry. Reads dynamics only: no reward,
 * no intent.
 */
import type { Rng } from "../rng/rng.js";
import type { FiniteModel } from "./types.js";

/** Cumulative tables of a model's start distribution and outcome probabilities. */
export interface SamplingTables {
  readonly nActions: number;
  readonly saStart: Int32Array;
  /** Cumulative probability within each (s, a) outcome range; the last entry of each range is 1. */
  readonly cumProb: Float64Array;
  /** Start states with positive probability and their cumulative probabilities (the last is 1). */
  readonly startStates: Int32Array;
  readonly startCum: Float64Array;
}

export function samplingTables(model: FiniteModel): SamplingTables {
  const nSA = model.nStates * model.nActions;
  const cumProb = new Float64Array(model.prob.length);
  for (let k = 0; k < nSA; k++) {
    let c = 0;
    const lo = model.saStart[k];
    const hi = model.saStart[k + 1];
    for (let o = lo; o < hi; o++) {
      c += model.prob[o];
      cumProb[o] = c;
    }
    cumProb[hi - 1] = 1;
  }
  const starts: number[] = [];
  const cums: number[] = [];
  let c = 0;
  for (let s = 0; s < model.nStates; s++) {
    if (model.start[s] > 0) {
      c += model.start[s];
      starts.push(s);
      cums.push(c);
    }
  }
  cums[cums.length - 1] = 1;
  return { nActions: model.nActions, saStart: model.saStart, cumProb, startStates: Int32Array.from(starts), startCum: Float64Array.from(cums) };
}

/** Sample a start state. Draws nothing when there is a single start state. */
export function sampleStart(t: Pick<SamplingTables, "startStates" | "startCum">, rng: Rng): number {
  const n = t.startStates.length;
  if (n === 1) return t.startStates[0];
  const u = rng.float();
  for (let i = 0; i < n - 1; i++) if (u < t.startCum[i]) return t.startStates[i];
  return t.startStates[n - 1];
}

/** Sample an outcome index of (s, a). Draws nothing when the pair has a single outcome. */
export function sampleOutcome(t: Pick<SamplingTables, "nActions" | "saStart" | "cumProb">, s: number, a: number, rng: Rng): number {
  const k = s * t.nActions + a;
  const lo = t.saStart[k];
  const hi = t.saStart[k + 1];
  if (hi - lo === 1) return lo;
  const u = rng.float();
  for (let o = lo; o < hi - 1; o++) if (u < t.cumProb[o]) return o;
  return hi - 1;
}
