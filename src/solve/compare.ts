/**
 * Designer-optimal vs intent-optimal, computed exactly: the core number of `gapwatch solve`.
 *
 * regret     = intent(intent-optimal policy) - intent(designer-optimal policy), from the start distribution;
 * regretNorm = regret / (intent(intent-optimal) - intent(uniform random)), the share of the achievable
 *              intent range (above random behaviour) that optimizing the designer reward gives up.
 */
import { designerReward } from "../model/reward.js";
import type { FiniteModel, RewardVariant } from "../model/types.js";
import { deterministicPolicy, evaluatePolicy, startValue, uniformPolicy, valueIteration, type SolveOptions } from "./dp.js";

export interface OptimalSide {
  values: Float64Array;
  policy: Int32Array;
  designer: number;
  intent: number;
}

export interface SolveReport {
  env: string;
  reward: string;
  gamma: number;
  states: number;
  designerOptimal: OptimalSide;
  intentOptimal: OptimalSide;
  random: { designer: number; intent: number };
  regret: number;
  regretNorm: number;
}

/** Normalize so that 0 = uniform-random and 1 = optimal; NaN-safe when the range is ~0. */
export function normalizeScore(value: number, random: number, optimal: number): number {
  const range = optimal - random;
  if (Math.abs(range) < 1e-12) return value >= optimal - 1e-12 ? 1 : 0;
  return (value - random) / range;
}

export function solveVariant(model: FiniteModel, variant: RewardVariant, opts: SolveOptions = {}): SolveReport {
  const gamma = opts.gamma ?? model.gamma;
  const o = { ...opts, gamma };
  const rd = designerReward(model, variant, gamma);
  const ri = model.intent;
  const dOpt = valueIteration(model, rd, o);
  const iOpt = valueIteration(model, ri, o);
  const dPol = deterministicPolicy(model, dOpt.policy);
  const iPol = deterministicPolicy(model, iOpt.policy);
  const intentOfDesignerOpt = startValue(model, evaluatePolicy(model, ri, dPol, o).values);
  const designerOfIntentOpt = startValue(model, evaluatePolicy(model, rd, iPol, o).values);
  const uni = uniformPolicy(model);
  const random = {
    designer: startValue(model, evaluatePolicy(model, rd, uni, o).values),
    intent: startValue(model, evaluatePolicy(model, ri, uni, o).values),
  };
  const intentBest = startValue(model, iOpt.values);
  const regret = intentBest - intentOfDesignerOpt;
  const range = intentBest - random.intent;
  return {
    env: model.name,
    reward: variant.name,
    gamma,
    states: model.nStates,
    designerOptimal: { values: dOpt.values, policy: dOpt.policy, designer: startValue(model, dOpt.values), intent: intentOfDesignerOpt },
    intentOptimal: { values: iOpt.values, policy: iOpt.policy, designer: designerOfIntentOpt, intent: intentBest },
    random,
    regret,
    regretNorm: Math.abs(range) < 1e-12 ? 0 : regret / range,
  };
}
