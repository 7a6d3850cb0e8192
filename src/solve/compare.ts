/**
 * Designer-optimal vs intent-optimal, computed exactly: the core number of `gapwatch solve`.
 *
 * regret     = intent(intent-optimal policy) - intent(designer-optimal policy), from the start distribution;
 * regretNorm = regret / (intent(intent-optimal) - intent(uniform random)), the share of the achievable
 *              intent range (above random behaviour) that optimizing the designer reward gives up.
 *
 * For gamma <= EXACT_GAMMA every value comes from the component-wise engine (default-solver.ts: within
 * FIXED_POINT_ACCURACY = 1e-9 of the fixed point in every state, proven for gamma < 1), not from
 * textbook sweeps; one plan of the model serves the designer reward and the intent. Above EXACT_GAMMA
 * and below 1, policy iteration over dense linear solves (exact.ts) answers instead.
 */
import { InputError } from "../errors.js";
import { likelyStart, tracePolicy } from "../model/likely-path.js";
import { designerReward } from "../model/reward.js";
import type { FiniteModel, RewardVariant } from "../model/types.js";
import { actionPolicyValues, optimalSolution, planValueIteration, startStateValues } from "./default-solver.js";
import { FIXED_POINT_ACCURACY } from "./evaluation.js";
import { EXACT_GAMMA, evaluateExact, exactPolicyIteration } from "./exact.js";
import { deterministicPolicy, startValue, uniformPolicy } from "./policy.js";
import type { Policy, Solution, SolveOptions } from "./sweeps.js";
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
  /** Both optima converged (value iteration within its sweep cap, or policy iteration stable). */
  converged: boolean;
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
  /** The uniform-random policy's intent values, state-indexed, to be read at the start states only. */
  randomIntentAtStarts: Float64Array;
}

/**
 * Optimal solutions (engine, default-solver.ts; dense policy iteration near gamma = 1) for the designer reward `rd` and for the intent, and the uniform-random policy's
 * start values of both: what `solveVariant` reports and what the monitor normalizes with
 * (src/monitor/evaluate.ts `scoreReferences`).
 */
export function solveOptima(model: FiniteModel, rd: Float64Array, opts: SolveOptions = {}): Optima {
  const gamma = opts.gamma ?? model.gamma;
  const o = { ...opts, gamma };
  if (gamma > EXACT_GAMMA && gamma < 1) {
    // Near 1 value iteration needs ~1/(1 - gamma) sweeps: policy iteration with exact linear solves.
    const designer = exactOptimum(model, rd, gamma, opts.maxIters);
    const intent = exactOptimum(model, model.intent, gamma, opts.maxIters);
    const uniform = uniformPolicy(model);
    const randomIntentAtStarts = evaluateExact(model, model.intent, uniform, gamma);
    const random = { designer: startValue(model, evaluateExact(model, rd, uniform, gamma)), intent: startValue(model, randomIntentAtStarts) };
    return { gamma, designer, intent, random, randomIntentAtStarts };
  }
  if (gamma >= 1) {
    // Undiscounted: value iteration converges when every policy worth following ends; values that
    // still move after UNDISCOUNTED_SWEEPS sweeps come from a loop that pays forever.
    const maxIters = opts.maxIters ?? UNDISCOUNTED_SWEEPS;
    for (const [reward, what] of [[rd, "designer reward"], [model.intent, "intent"]] as const) {
      const v = valueIteration(model, reward, { ...o, maxIters });
      if (!v.converged) throw unboundedError(model, v.policy, gamma, what, maxIters);
    }
  }
  const plan = planValueIteration(model);
  const designer = optimalSolution(model, rd, o, plan);
  const intent = optimalSolution(model, model.intent, o, plan);
  const [rdRandom, riRandom] = startStateValues(model, [rd, model.intent], uniformPolicy(model), { ...o, accuracy: FIXED_POINT_ACCURACY });
  return { gamma, designer, intent, random: { designer: startValue(model, rdRandom), intent: startValue(model, riRandom) }, randomIntentAtStarts: riRandom };
}

export function solveVariant(model: FiniteModel, variant: RewardVariant, opts: SolveOptions = {}): SolveReport {
  return solveVariantDetailed(model, variant, opts).report;
}

/** `solveVariant` with what it computed on the way, for callers that need more than the report (the audit). */
export interface VariantSolve {
  report: SolveReport;
  /** Designer reward per outcome. */
  rd: Float64Array;
  /** One-hot policies of the designer-optimal and intent-optimal solutions. */
  dPolicy: Policy;
  iPolicy: Policy;
  /** Per state: [intent, ...extra] under the designer-optimal policy, [designer reward, ...extra] under the intent-optimal one. */
  ofDesignerOptimal: Float64Array[];
  ofIntentOptimal: Float64Array[];
  /** The uniform-random policy's intent values at the start states (`Optima.randomIntentAtStarts`). */
  randomIntentAtStarts: Float64Array;
}

/**
 * The report of `solveVariant`, with the per-state values of the cross evaluations (intent of the
 * designer-optimal policy, designer reward of the intent-optimal one) and of each `extra` reward per
 * outcome under both policies, each policy's chain built once.
 */
export function solveVariantDetailed(model: FiniteModel, variant: RewardVariant, opts: SolveOptions = {}, extra: Float64Array[] = []): VariantSolve {
  const gamma = opts.gamma ?? model.gamma;
  const o = { ...opts, gamma };
  const rd = designerReward(model, variant, gamma);
  const ri = model.intent;
  const { designer: dOpt, intent: iOpt, random, randomIntentAtStarts } = solveOptima(model, rd, o);
  const exact = gamma > EXACT_GAMMA && gamma < 1;
  const dPolicy = deterministicPolicy(model, dOpt.policy);
  const same = sameActions(dOpt.policy, iOpt.policy);
  const iPolicy = same ? dPolicy : deterministicPolicy(model, iOpt.policy);
  const evaluate = (rewards: Float64Array[], actions: Int32Array, pol: Policy) =>
    exact ? rewards.map((r) => evaluateExact(model, r, pol, gamma)) : actionPolicyValues(model, rewards, actions, o, pol);
  let ofDesignerOptimal: Float64Array[];
  let ofIntentOptimal: Float64Array[];
  if (same) {
    // One policy (no regret by construction): one evaluation, every reward once.
    const [intent, designer, ...rest] = evaluate([ri, rd, ...extra], dOpt.policy, dPolicy);
    ofDesignerOptimal = [intent, ...rest];
    ofIntentOptimal = [designer, ...rest];
  } else {
    ofDesignerOptimal = evaluate([ri, ...extra], dOpt.policy, dPolicy);
    ofIntentOptimal = evaluate([rd, ...extra], iOpt.policy, iPolicy);
  }
  const intentOfDesignerOpt = startValue(model, ofDesignerOptimal[0]);
  const designerOfIntentOpt = startValue(model, ofIntentOptimal[0]);
  const intentBest = startValue(model, iOpt.values);
  // Regret is >= 0 (the intent-optimal policy is optimal); a difference within the solvers' proven
  // accuracy (both values within FIXED_POINT_ACCURACY of exact) is no regret, not a sign to report.
  const rawRegret = intentBest - intentOfDesignerOpt;
  const regret = rawRegret <= 2 * FIXED_POINT_ACCURACY ? 0 : rawRegret;
  const range = intentBest - random.intent;
  const report: SolveReport = {
    env: model.name,
    reward: variant.name,
    gamma,
    states: model.nStates,
    designerOptimal: { values: dOpt.values, policy: dOpt.policy, designer: startValue(model, dOpt.values), intent: intentOfDesignerOpt },
    intentOptimal: { values: iOpt.values, policy: iOpt.policy, designer: designerOfIntentOpt, intent: intentBest },
    random,
    regret,
    regretNorm: Math.abs(range) < 1e-12 ? 0 : regret / range,
    converged: dOpt.converged && iOpt.converged,
  };
  return { report, rd, dPolicy, iPolicy, ofDesignerOptimal, ofIntentOptimal, randomIntentAtStarts };
}

function sameActions(a: Int32Array, b: Int32Array): boolean {
  if (a.length !== b.length) return false;
  for (let i = 0; i < a.length; i++) if (a[i] !== b[i]) return false;
  return true;
}

/** Default sweep cap of `solveOptima` at gamma = 1 (built-ins converge within 1,000). */
export const UNDISCOUNTED_SWEEPS = 20_000;

/** Loops of more states than this are shown by their first states and "...". */
const LOOP_SHOWN = 6;

/** Value iteration at gamma = 1 did not settle: name the loop the greedy policy follows from the start. */
function unboundedError(model: FiniteModel, actions: Int32Array, gamma: number, what: string, sweeps: number): InputError {
  const t = tracePolicy(model, actions, likelyStart(model), model.nStates + 1);
  const label = (s: number) => model.stateLabels[s] ?? String(s);
  const cycle = t.loopStart >= 0 ? t.states.slice(t.loopStart) : [];
  const shown = cycle.length > LOOP_SHOWN ? [...cycle.slice(0, LOOP_SHOWN).map(label), `... (${cycle.length} states)`] : [...cycle, cycle[0]].map(label);
  const loop = cycle.length > 0 ? ` (from the start it loops ${shown.join(" -> ")})` : "";
  return new InputError(
    "solve.unbounded",
    `with gamma ${gamma} the ${what}'s values still grow after ${sweeps} sweeps: a loop that pays keeps its return growing without end${loop}; use a discount below 1 (--gamma 0.99), remove the loop that pays, or raise --max-iters if the values are only slow to settle`,
  );
}

/** Exact optimum for EXACT_GAMMA < gamma < 1 by policy iteration over linear solves. */
function exactOptimum(model: FiniteModel, reward: Float64Array, gamma: number, maxPolicyIters?: number): Solution {
  const r = exactPolicyIteration(model, reward, gamma, { maxPolicyIters });
  if (r.improper) throw new Error(`singular policy system at gamma ${gamma} < 1`); // cannot happen: I - gamma P is invertible
  return r;
}
