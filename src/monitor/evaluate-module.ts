/**
 * Monte Carlo scoring of a policy on a simulator module that has no finite model (`finite: false`):
 * rollouts through the module's own `step` (with the Episode wrapper, which applies the horizon and
 * checks every step), summing the discounted designer reward (the variant's weights over the step's
 * features) and intent, each with a 95% interval. Normalization uses given references (random = low,
 * optimal = high), since there is no model to solve for them.
 */
import { normalizeScore } from "../solve/compare.js";
import type { Rng } from "../rng/rng.js";
import type { EnvDefinition, ScoreRange } from "../sim/define.js";
import { Episode } from "../sim/episode.js";
import { RolloutSums, type MonteCarloScores } from "./evaluate.js";

export interface ModuleEvalOptions {
  /** For messages: the module path. */
  source: string;
  /** Feature weights of the designer reward. */
  weights: Record<string, number>;
  gamma: number;
  episodes: number;
  rng: Rng;
  designerRange: ScoreRange;
  intentRange: ScoreRange;
}

/** Score the deterministic policy `act(state)` on the module by `episodes` rollouts. */
export function evaluateModuleMonteCarlo<S>(def: EnvDefinition<S>, act: (state: S) => number, opts: ModuleEvalOptions): MonteCarloScores {
  const { rng, gamma } = opts;
  const w = def.features.map((f) => opts.weights[f] ?? 0);
  const episode = new Episode(def, { source: opts.source });
  const sums = new RolloutSums();
  for (let e = 0; e < opts.episodes; e++) {
    let s = episode.reset(rng);
    let gd = 0;
    let gi = 0;
    let disc = 1;
    while (!episode.done) {
      const r = episode.step(act(s), rng);
      let d = 0;
      for (let f = 0; f < w.length; f++) if (w[f] !== 0) d += w[f] * (r.features[def.features[f]] ?? 0);
      gd += disc * d;
      gi += disc * r.intent;
      disc *= gamma;
      s = r.state;
    }
    sums.add(gd, gi);
  }
  const n = opts.episodes;
  const { designerCI, intentCI } = sums.intervals();
  return {
    designer: designerCI.mean,
    intent: intentCI.mean,
    designerNorm: normalizeScore(designerCI.mean, opts.designerRange.low, opts.designerRange.high),
    intentNorm: normalizeScore(intentCI.mean, opts.intentRange.low, opts.intentRange.high),
    episodes: n,
    horizon: episode.horizon,
    designerCI,
    intentCI,
    // The horizon is the module's own episode limit, so nothing beyond it is cut off.
    designerTail: 0,
    intentTail: 0,
  };
}
