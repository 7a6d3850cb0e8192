/**
 * Scoring a deterministic greedy policy on a finite model, for the monitor. The monitor is the one
 * place besides the solvers that reads `model.intent`.
 *
 * Two evaluators return the same `Scores` shape:
 * - `evaluateExact`: iterative policy evaluation (src/solve/evaluation.ts `evaluatePolicy`) of the designer
 *   reward and of the intent, from the start distribution. No sampling noise. It evaluates only the
 *   states the policy can reach from a start state (the start value depends on nothing else), with
 *   in-place sweeps ordered successors-first, which keeps a checkpoint cheap.
 * - `evaluateMonteCarlo`: seeded rollouts of the policy through the model's own transition
 *   probabilities, discounted returns truncated at a horizon, mean with a 95% interval (Student t for
 *   small samples, normal otherwise), plus a bound on what the truncation can hide.
 *
 * Normalization (both): 0 = the uniform-random policy, 1 = the optimal policy for that score
 * (`normalizeScore` from src/solve/compare.ts). The references are computed once per run by
 * `scoreReferences` through `solveOptima` (src/solve/compare.ts, shared with `solveVariant`: value
 * iteration for each score; the uniform policy's values by the fixed-point evaluator of
 * src/solve/evaluation.ts, within 1e-9 absolute of the exact values, guaranteed for gamma < 1).
 */
import { designerReward } from "../model/reward.js";
import type { FiniteModel, RewardVariant } from "../model/types.js";
import { sampleOutcome, samplingTables, sampleStart } from "../model/sampler.js";
import type { Rng } from "../rng/rng.js";
import { normalizeScore, solveOptima } from "../solve/compare.js";
import { policyValuesMany } from "../solve/default-solver.js";
import { startValue } from "../solve/policy.js";
import type { Policy } from "../solve/sweeps.js";
import { normalQuantile } from "../stats/normal.js";

/** Scores of one policy. `designer` / `intent` are expected discounted returns from the start distribution. */
export interface Scores {
  designer: number;
  intent: number;
  /** 0 = uniform-random policy, 1 = designer-optimal policy. */
  designerNorm: number;
  /** 0 = uniform-random policy, 1 = intent-optimal policy. */
  intentNorm: number;
}

/** An estimate with a two-sided 95% interval. */
export interface Estimate {
  mean: number;
  lower: number;
  upper: number;
  /** Half-width of the interval. */
  halfWidth: number;
}

export interface MonteCarloScores extends Scores {
  episodes: number;
  /** Rollouts stop after this many steps (a truncation, not a termination). */
  horizon: number;
  designerCI: Estimate;
  intentCI: Estimate;
  /**
   * Largest possible contribution of the steps cut off by the horizon, per score:
   * gamma^horizon * max|r| / (1 - gamma) (0 when no rollout was cut; Infinity with gamma = 1). The exact value lies within
   * the interval widened by this bound.
   */
  designerTail: number;
  intentTail: number;
}

/** What normalization needs, computed once per (model, variant, gamma). */
export interface ScoreReferences {
  gamma: number;
  /** Designer reward per outcome (shaping included). */
  designerReward: Float64Array;
  designerOptimal: number;
  designerRandom: number;
  intentOptimal: number;
  intentRandom: number;
  /** Optimal greedy policies for each score (handy for tests and reports). */
  designerOptimalPolicy: Int32Array;
  intentOptimalPolicy: Int32Array;
}

export function scoreReferences(model: FiniteModel, variant: RewardVariant, gamma = model.gamma): ScoreReferences {
  return scoreReferencesFor(model, designerReward(model, variant, gamma), gamma);
}

/**
 * The references of a designer reward vector `rd` already computed (src/model/reward.ts
 * `designerReward`), so a caller that also hands `rd` to a learner computes it once.
 */
export function scoreReferencesFor(model: FiniteModel, rd: Float64Array, gamma = model.gamma): ScoreReferences {
  const opt = solveOptima(model, rd, { gamma });
  return {
    gamma,
    designerReward: rd,
    designerOptimal: startValue(model, opt.designer.values),
    designerRandom: opt.random.designer,
    intentOptimal: startValue(model, opt.intent.values),
    intentRandom: opt.random.intent,
    designerOptimalPolicy: opt.designer.policy,
    intentOptimalPolicy: opt.intent.policy,
  };
}

function normalized(refs: ScoreReferences, designer: number, intent: number): Scores {
  return {
    designer,
    intent,
    designerNorm: normalizeScore(designer, refs.designerRandom, refs.designerOptimal),
    intentNorm: normalizeScore(intent, refs.intentRandom, refs.intentOptimal),
  };
}

/** Normalize a pair of raw scores with the run's references. */
export function normalizeScores(refs: ScoreReferences, designer: number, intent: number): Scores {
  return normalized(refs, designer, intent);
}

/**
 * The states reachable from the start distribution when following `actions` (terminal states
 * included, they end a path), in depth-first POST-order: every state comes after the states it
 * leads to, except along cycles. Sweeping in this order (Gauss-Seidel) propagates values along a
 * path in one sweep and around a cycle in one sweep per turn.
 */
export function reachableStates(model: FiniteModel, actions: Int32Array | null): Int32Array {
  const nA = model.nActions;
  const seen = new Uint8Array(model.nStates);
  const order: number[] = [];
  // Iterative DFS: a stack of (state, next outcome index to visit).
  const stackS: number[] = [];
  const stackO: number[] = [];
  // With `actions = null` (uniform policy) the outcomes of all actions of s form one contiguous range.
  const lo = (s: number) => model.saStart[actions ? s * nA + clampAction(actions[s], nA) : s * nA];
  const hiOf = (s: number) => model.saStart[actions ? s * nA + clampAction(actions[s], nA) + 1 : (s + 1) * nA];
  const push = (s: number) => {
    seen[s] = 1;
    stackS.push(s);
    stackO.push(model.terminal[s] ? -1 : lo(s));
  };
  for (let s0 = 0; s0 < model.nStates; s0++) {
    if (!(model.start[s0] > 0) || seen[s0]) continue;
    push(s0);
    while (stackS.length > 0) {
      const top = stackS.length - 1;
      const s = stackS[top];
      const o = stackO[top];
      const hi = o < 0 ? -1 : hiOf(s);
      if (o >= 0 && o < hi) {
        stackO[top] = o + 1;
        const sp = model.next[o];
        if (model.prob[o] > 0 && !seen[sp]) push(sp);
      } else {
        order.push(s);
        stackS.pop();
        stackO.pop();
      }
    }
  }
  return Int32Array.from(order);
}

function clampAction(a: number, nA: number): number {
  return a >= 0 && a < nA ? a : 0;
}

/**
 * The policy's Markov chain restricted to the reachable states, as a one-action model that
 * `evaluatePolicy` accepts (it reads only the dynamics fields). Rewards are remapped per outcome.
 */
function restrictedChain(model: FiniteModel, actions: Int32Array | null, states: Int32Array, rewards: Float64Array[]) {
  const nA = model.nActions;
  // Outcome range of the policy in s: one action's outcomes, or (uniform) all actions' with weight 1/nA.
  const range = (s: number): [number, number] =>
    actions ? [model.saStart[s * nA + clampAction(actions[s], nA)], model.saStart[s * nA + clampAction(actions[s], nA) + 1]] : [model.saStart[s * nA], model.saStart[(s + 1) * nA]];
  const weight = actions ? 1 : 1 / nA;
  const index = new Int32Array(model.nStates).fill(-1);
  for (let i = 0; i < states.length; i++) index[states[i]] = i;
  let nO = 0;
  for (const s of states) {
    const [a, b] = range(s);
    nO += b - a;
  }
  const saStart = new Int32Array(states.length + 1);
  const next = new Int32Array(nO);
  const prob = new Float64Array(nO);
  const rs = rewards.map(() => new Float64Array(nO));
  const terminal = new Uint8Array(states.length);
  const start = new Float64Array(states.length);
  let o2 = 0;
  for (let i = 0; i < states.length; i++) {
    const s = states[i];
    terminal[i] = model.terminal[s];
    start[i] = model.start[s];
    saStart[i] = o2;
    const [oLo, oHi] = range(s);
    for (let o = oLo; o < oHi; o++) {
      const j = index[model.next[o]];
      // A zero-probability outcome may lead outside the reachable set; point it at itself.
      next[o2] = j >= 0 ? j : i;
      prob[o2] = weight * model.prob[o];
      for (let r = 0; r < rewards.length; r++) rs[r][o2] = rewards[r][o];
      o2++;
    }
  }
  saStart[states.length] = o2;
  const chain = {
    name: `${model.name} (policy chain)`,
    gamma: model.gamma,
    nStates: states.length,
    nActions: 1,
    terminal,
    start,
    saStart,
    next,
    prob,
  } as unknown as FiniteModel;
  return { chain, rewards: rs };
}

/**
 * Exact discounted designer return and intent score of a deterministic policy (one action per state;
 * entries for terminal states are ignored), from the start distribution.
 */
export function evaluateExact(model: FiniteModel, refs: ScoreReferences, actions: Int32Array): Scores {
  const [d, i] = evaluateChain(model, actions, [refs.designerReward, model.intent], refs.gamma);
  return normalized(refs, d, i);
}

/**
 * Start values of a deterministic policy (`actions`) or of the uniform-random policy (`null`) for
 * each reward: the default exact solver (engine, default-solver.ts) on the policy's Markov chain over
 * the reachable states (in-place textbook sweeps in post-order where the engine proves no bound).
 */
export function evaluateChain(model: FiniteModel, actions: Int32Array | null, rewardsIn: Float64Array[], gamma: number): number[] {
  const states = reachableStates(model, actions);
  const { chain, rewards } = restrictedChain(model, actions, states, rewardsIn);
  const ones: Policy = new Float64Array(states.length).fill(1);
  return policyValuesMany(chain, rewards, ones, { gamma, inPlace: true }).map((e) => startValue(chain, e.values));
}

/**
 * Two-sided 97.5% Student-t quantile for `df` degrees of freedom: the Cornish-Fisher expansion of t
 * around the normal quantile (Abramowitz & Stegun 1964, 26.7.5), four terms; against the t tables
 * (NIST/SEMATECH e-Handbook 1.3.6.7.2) the error is 0.004 at df = 3 and below 0.001 from df = 5, far
 * below the interval's own sampling error.
 */
export function tQuantile975(df: number): number {
  const z = normalQuantile(0.975);
  if (!Number.isFinite(df) || df > 1e7) return z;
  const z2 = z * z;
  const g1 = (z2 * z + z) / 4;
  const g2 = (5 * z2 * z2 * z + 16 * z2 * z + 3 * z) / 96;
  const g3 = (3 * z2 * z2 * z2 * z + 19 * z2 * z2 * z + 17 * z2 * z - 15 * z) / 384;
  const g4 = (79 * z2 * z2 * z2 * z2 * z + 776 * z2 * z2 * z2 * z + 1482 * z2 * z2 * z - 1920 * z2 * z - 945 * z) / 92160;
  return z + g1 / df + g2 / df ** 2 + g3 / df ** 3 + g4 / df ** 4;
}

/** Running sums of rollouts' designer and intent returns, and their 95% intervals. */
export class RolloutSums {
  private sd = 0;
  private sd2 = 0;
  private si = 0;
  private si2 = 0;
  private n = 0;
  add(designer: number, intent: number): void {
    this.sd += designer;
    this.sd2 += designer * designer;
    this.si += intent;
    this.si2 += intent * intent;
    this.n++;
  }
  intervals(): { designerCI: Estimate; intentCI: Estimate } {
    return { designerCI: estimate(this.sd, this.sd2, this.n), intentCI: estimate(this.si, this.si2, this.n) };
  }
}

/** Mean and two-sided 95% t-interval (normal for n >= 1000) from a sum and a sum of squares of n values. */
function estimate(sum: number, sumSq: number, n: number): Estimate {
  const mean = sum / n;
  if (n < 2) return { mean, lower: -Infinity, upper: Infinity, halfWidth: Infinity };
  const variance = Math.max(0, (sumSq - n * mean * mean) / (n - 1));
  const q = n >= 1000 ? normalQuantile(0.975) : tQuantile975(n - 1);
  const halfWidth = q * Math.sqrt(variance / n);
  return { mean, lower: mean - halfWidth, upper: mean + halfWidth, halfWidth };
}

export interface MonteCarloOptions {
  /** Number of rollouts. */
  episodes: number;
  /** Seeded stream for start states and outcomes. */
  rng: Rng;
  /**
   * Step limit per rollout. Default: the model's horizon, raised until the truncation bound
   * gamma^H * max|r| / (1 - gamma) is below 1e-6 of the reward scale (at most 20 x the model horizon).
   */
  horizon?: number;
}

/** The default rollout horizon for a model and discount (see MonteCarloOptions.horizon). */
export function defaultRolloutHorizon(model: FiniteModel, gamma: number): number {
  if (gamma >= 1) return model.horizon;
  const need = Math.ceil(Math.log(1e-6 * (1 - gamma)) / Math.log(gamma));
  return Math.min(20 * model.horizon, Math.max(model.horizon, need));
}

function maxAbs(x: Float64Array): number {
  let m = 0;
  for (let i = 0; i < x.length; i++) if (Math.abs(x[i]) > m) m = Math.abs(x[i]);
  return m;
}

/**
 * Monte Carlo estimate of the same scores: `episodes` rollouts of the deterministic policy from the
 * start distribution, through the model's transition probabilities. `actions = null` rolls out the
 * uniform-random policy instead (one `rng.int(nActions)` per step). Draws (src/model/sampler.ts): one
 * `rng.float()` per start when there are several start states, one per step when the pair has several
 * outcomes.
 */
export function evaluateMonteCarlo(model: FiniteModel, refs: ScoreReferences, actions: Int32Array | null, opts: MonteCarloOptions): MonteCarloScores {
  const gamma = refs.gamma;
  const horizon = opts.horizon ?? defaultRolloutHorizon(model, gamma);
  const { rng } = opts;
  const nA = model.nActions;
  const rd = refs.designerReward;
  const ri = model.intent;
  const { next, terminal } = model;
  const tables = samplingTables(model);
  const sums = new RolloutSums();
  let cut = 0;
  for (let e = 0; e < opts.episodes; e++) {
    let s = sampleStart(tables, rng);
    let gd = 0;
    let gi = 0;
    let disc = 1;
    let t = 0;
    while (!terminal[s] && t < horizon) {
      const o = sampleOutcome(tables, s, actions ? clampAction(actions[s], nA) : rng.int(nA), rng);
      gd += disc * rd[o];
      gi += disc * ri[o];
      disc *= gamma;
      s = next[o];
      t++;
    }
    if (!terminal[s]) cut++;
    sums.add(gd, gi);
  }
  const n = opts.episodes;
  const { designerCI, intentCI } = sums.intervals();
  const tailFactor = cut === 0 ? 0 : gamma >= 1 ? Infinity : gamma ** horizon / (1 - gamma);
  return {
    ...normalized(refs, designerCI.mean, intentCI.mean),
    episodes: n,
    horizon,
    designerCI,
    intentCI,
    designerTail: tailFactor * maxAbs(rd),
    intentTail: tailFactor * maxAbs(ri),
  };
}
