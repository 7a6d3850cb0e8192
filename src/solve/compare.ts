/**
 * Designer-optimal vs intent-optimal, computed exactly: the core number of `gapwatch solve`.
 *
 * regret     = intent(intent-optimal policy) - intent(designer-optimal policy), from the start distribution;
 * regretNorm = regret / (intent(intent-optimal) - intent(uniform random)), the share of the achievable
 *              intent range (above random behaviour) that optimizing the designer reward gives up.
 *
 * The uniform-random values come from the fixed-point evaluator (`accuracy` = FIXED_POINT_ACCURACY,
 * within 1e-9 of v_pi in every state, guaranteed for gamma < 1), not from textbook sweeps.
 */
import { designerReward } from "../model/reward.js";
import type { FiniteModel, RewardVariant } from "../model/types.js";
import { evaluatePolicy, evaluatePolicyMany, FIXED_POINT_ACCURACY } from "./evaluation.js";
import { deterministicPolicy, startValue, uniformPolicy } from "./policy.js";
import type { Solution, SolveOptions } from "./sweeps.js";
import { valueIteration } from "./value-iteration.js";

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

/** Both optima and the uniform-random start values of one designer reward vector and of the intent. */
export interface Optima {
  gamma: number;
  designer: Solution;
  intent: Solution;
  /** Start values of the uniform-random policy. */
  random: { designer: number; intent: number };
}

/**
 * Value iteration for the designer reward `rd` and for the intent, and the uniform-random policy's
 * start values of both: what `solveVariant` reports and what the monitor normalizes with
 * (src/monitor/evaluate.ts `scoreReferences`).
 */
export function solveOptima(model: FiniteModel, rd: Float64Array, opts: SolveOptions = {}): Optima {
  const gamma = opts.gamma ?? model.gamma;
  const o = { ...opts, gamma };
  const designer = valueIteration(model, rd, o);
  const intent = valueIteration(model, model.intent, o);
  // The uniform-random reference only needs v_pi's fixed point: computed to within
  // FIXED_POINT_ACCURACY (1e-9 absolute on every state's value, guaranteed; see evaluateFixedPoint).
  const [rdRandom, riRandom] = evaluatePolicyMany(model, [rd, model.intent], uniformPolicy(model), { ...o, accuracy: FIXED_POINT_ACCURACY });
  return { gamma, designer, intent, random: { designer: startValue(model, rdRandom.values), intent: startValue(model, riRandom.values) } };
}

export function solveVariant(model: FiniteModel, variant: RewardVariant, opts: SolveOptions = {}): SolveReport {
  const gamma = opts.gamma ?? model.gamma;
  const o = { ...opts, gamma };
  const rd = designerReward(model, variant, gamma);
  const ri = model.intent;
  const { designer: dOpt, intent: iOpt, random } = solveOptima(model, rd, o);
  const dPol = deterministicPolicy(model, dOpt.policy);
  const iPol = deterministicPolicy(model, iOpt.policy);
  const intentOfDesignerOpt = startValue(model, evaluatePolicy(model, ri, dPol, o).values);
  const designerOfIntentOpt = startValue(model, evaluatePolicy(model, rd, iPol, o).values);
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
