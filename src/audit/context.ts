/**
 * What every audit check needs, computed once per (model, variant): the designer reward, the exact
 * designer-optimal and intent-optimal solutions, per-state values of the policies the checks compare,
 * the states reachable from the start distribution, and "what doing the task pays per step".
 *
 * Task rate (the yardstick of the loop and idling checks). "Doing the task" is the intent-optimal
 * policy pi_I. Its designer rate is the discounted average designer reward per step while it runs:
 *
 *     taskRate = V_d^{pi_I}(start) / D^{pi_I}(start),   D^pi(s) = E_pi[ sum_{t < T} gamma^t | s_0 = s ]
 *
 * where T is the (possibly infinite) step at which the episode enters a terminal state, so D is the
 * expected discounted number of steps. In a continuing task (no terminals) D = 1 / (1 - gamma) and
 * taskRate = (1 - gamma) V_d^{pi_I}; in an episodic task it is the reward per (discounted) step of the
 * episode the task takes. A loop ridden forever earns its mean reward per step at the same scale, so the
 * two numbers compare like for like. The intent rate of the task is V_i^{pi_I}(start) / D^{pi_I}(start).
 *
 * Pure; no I/O.
 */
import type { FiniteModel, RewardVariant } from "../model/types.js";
import { solveVariantDetailed, type SolveReport } from "../solve/compare.js";
import { policyValues } from "../solve/default-solver.js";
import { startValue } from "../solve/policy.js";
import type { Policy } from "../solve/sweeps.js";
import { modelChoiceGraph, type ChoiceGraph } from "./choice-graph.js";
import { stronglyConnectedComponents, type Components } from "./mean-cycle/graph.js";

export interface AuditOptions {
  /** Discount (default: the model's). */
  gamma?: number;
  /** Largest acceptable failure probability of the designer-optimal route (risk check). Default 0.01. */
  maxRisk?: number;
  /** regretNorm at or above which the regret check is critical. Default 0.3. */
  regretCritical?: number;
  /** regretNorm at or above which the regret check is a warning. Default 0.05. */
  regretWarning?: number;
  /** Difference in normalized regret between groups that is flagged. Default 0.2. */
  groupGap?: number;
  /**
   * Outcomes kept as edges of the choice graph of the loop check: probability >= this. Default 0.5:
   * the most likely outcome of each action ("what the agent aims for"); loops using an edge with
   * probability < 1 report the chance of completing a lap as planned.
   */
  loopMinProb?: number;
  /** Catastrophic states (0/1 per state). Default: detected, see `catastrophicStates`. */
  catastrophic?: Uint8Array;
  /** Run the weight-sensitivity check (several exact solves per feature). Default true. */
  sensitivity?: boolean;
  /** Features the sensitivity check sweeps. Default: weighted features, plus unweighted ones when regret is flagged. */
  sensitivityFeatures?: string[];
}

export const AUDIT_DEFAULTS = {
  maxRisk: 0.01,
  regretCritical: 0.3,
  regretWarning: 0.05,
  groupGap: 0.2,
  loopMinProb: 0.5,
} as const;

export interface AuditContext {
  model: FiniteModel;
  variant: RewardVariant;
  gamma: number;
  /** Designer reward per outcome. */
  rd: Float64Array;
  solve: SolveReport;
  /** One-hot policies of the two optima. */
  dPolicy: Policy;
  iPolicy: Policy;
  /**
   * Intent values per state of the designer-optimal policy, and of uniform random behaviour at the
   * start states only (read there by the per-group regret; other entries are not values).
   */
  intentOfD: Float64Array;
  intentOfRandom: Float64Array;
  /** Designer values per state of the intent-optimal policy. */
  designerOfI: Float64Array;
  /** Expected discounted steps per state under the intent-optimal and designer-optimal policies. */
  stepsOfI: Float64Array;
  stepsOfD: Float64Array;
  /** 1 where a state is reachable from the start distribution under some actions. */
  reachable: Uint8Array;
  task: { designerRate: number; intentRate: number; steps: number };
  opts: Required<Pick<AuditOptions, "maxRisk" | "regretCritical" | "regretWarning" | "groupGap" | "loopMinProb">> & AuditOptions;
}

/** States reachable from the start distribution through positive-probability outcomes. */
export function reachableStates(model: FiniteModel): Uint8Array {
  const { nStates: nS, nActions: nA, saStart, next, prob, terminal } = model;
  const seen = new Uint8Array(nS);
  const stack = new Int32Array(nS);
  let sp = 0;
  for (let s = 0; s < nS; s++) if (model.start[s] > 0) ((seen[s] = 1), (stack[sp++] = s));
  while (sp > 0) {
    const s = stack[--sp];
    if (terminal[s]) continue;
    for (let o = saStart[s * nA]; o < saStart[(s + 1) * nA]; o++) {
      if (!(prob[o] > 0)) continue;
      const t = next[o];
      if (!seen[t]) ((seen[t] = 1), (stack[sp++] = t));
    }
  }
  return seen;
}

/** Expected discounted number of steps before termination, per state, under `policy`. */
export function discountedSteps(model: FiniteModel, policy: Policy, gamma: number): Float64Array {
  return policyValues(model, onesPerOutcome(model), policy, { gamma, tol: 1e-10 }).values;
}

function onesPerOutcome(model: FiniteModel): Float64Array {
  return new Float64Array(model.next.length).fill(1);
}

export function prepareAudit(model: FiniteModel, variant: RewardVariant, options: AuditOptions = {}): AuditContext {
  const gamma = options.gamma ?? model.gamma;
  const opts = { ...AUDIT_DEFAULTS, ...stripUndefined(options) };
  // One solve gives the optima and, per state, the cross values and the expected discounted steps
  // under both optimal policies (exact values: see solve/compare.ts).
  const ones = onesPerOutcome(model);
  const v = solveVariantDetailed(model, variant, { gamma }, [ones]);
  const { rd, dPolicy, iPolicy, report: solve } = v;
  const [intentOfD, stepsOfD] = v.ofDesignerOptimal;
  const [designerOfI, stepsOfI] = v.ofIntentOptimal;
  // The per-group regret reads the random policy's intent at each start state (solved with the optima).
  const intentOfRandom = v.randomIntentAtStarts;
  const steps = startValue(model, stepsOfI);
  const task = {
    designerRate: steps > 0 ? startValue(model, designerOfI) / steps : 0,
    intentRate: steps > 0 ? solve.intentOptimal.intent / steps : 0,
    steps,
  };
  return { model, variant, gamma, rd, solve, dPolicy, iPolicy, intentOfD, intentOfRandom, designerOfI, stepsOfI, stepsOfD, reachable: reachableStates(model), task, opts };
}

function stripUndefined<T extends object>(o: T): Partial<T> {
  return Object.fromEntries(Object.entries(o).filter(([, v]) => v !== undefined)) as Partial<T>;
}

/** Names for evidence. */
export function labelsOf(model: FiniteModel, states: readonly number[]): string[] {
  return states.map((s) => model.stateLabels[s] ?? String(s));
}
export function actionNames(model: FiniteModel, actions: readonly number[]): string[] {
  return actions.map((a) => model.actions[a] ?? String(a));
}

/** Round for messages. */
export function fmt(x: number, digits = 3): string {
  if (!Number.isFinite(x)) return String(x);
  const a = Math.abs(x);
  if (a !== 0 && (a < 1e-3 || a >= 1e5)) return x.toExponential(2);
  return x.toFixed(digits);
}

const choiceGraphs = new WeakMap<AuditContext, { graph: ChoiceGraph; components: Components | null }>();

function choiceEntry(ctx: AuditContext) {
  let entry = choiceGraphs.get(ctx);
  if (!entry) {
    entry = { graph: modelChoiceGraph(ctx.model, ctx.rd, { minProb: ctx.opts.loopMinProb, from: ctx.reachable }), components: null };
    choiceGraphs.set(ctx, entry);
  }
  return entry;
}

/**
 * The choice graph of the loop checks (reward-loop, shaping terms): outcomes of probability at least
 * `opts.loopMinProb` out of the reachable states, weighted with the designer reward. Built once per
 * context; other weights through choice-graph.ts `reweighted`.
 */
export function reachableChoiceGraph(ctx: AuditContext): ChoiceGraph {
  return choiceEntry(ctx).graph;
}

/** Strongly connected components of `reachableChoiceGraph(ctx)` (any weights), computed once. */
export function reachableChoiceComponents(ctx: AuditContext): Components {
  const entry = choiceEntry(ctx);
  return (entry.components ??= stronglyConnectedComponents(entry.graph.n, entry.graph.start, entry.graph.to));
}
