/**
 * `gapwatch retune` as a pure computation over loaded layouts: search on the tuning layouts, evaluate
 * on the held-out ones, diagnose per feature, and build the document `--json` prints:
 *
 *   { env, reward, tuned: {weights}, search: {accepted, rounds, restarts, budget, seed},
 *     tuning: {layouts, regretNorm, maxRegretNorm},
 *     holdout: {layouts, regretNorm, gaming, gamingRate, ci: {lower, upper, confidence}, gamingAt,
 *               worst: {layout, regretNorm, regret, route, divergence} | null},
 *     features: [{name, weight, interval: [lo|null, hi|null] | null, unbounded, constrained, likelyCause, suggest}],
 *     diagnosis: [sentences] }
 *
 * Infinite interval ends are null in JSON. The held-out evaluation (`evaluateHoldout`) is what the
 * benchmark times. Pure; the caller loads the layouts.
 */
import { prepareAudit } from "../audit/context.js";
import { firstDivergence } from "../audit/checks/regret.js";
import { likelyStart, tracePolicy } from "../model/likely-path.js";
import type { FiniteModel } from "../model/types.js";
import { diagnose, GAMING_AT, holdoutRows, layoutRegret, searchWeights, summarizeHoldout, variantOf, type FeatureBounds, type HoldoutSummary, type LayoutModel } from "./search.js";

export interface RetuneInput {
  env: string;
  reward: string;
  start: Record<string, number>;
  bounds: FeatureBounds[];
  tuning: LayoutModel[];
  /** Held-out layouts, loaded on demand (so a long list does not sit in memory). */
  holdout: number[];
  loadLayout: (layout: number) => FiniteModel;
  budget: number;
  seed: number;
  /** Held-out regretNorms of given weights, in `holdout` order (e.g. on worker threads); default: solved here, one by one. */
  holdoutRegrets?: (weights: Record<string, number>) => Promise<number[]>;
}

export interface WorstLayout {
  layout: number;
  regretNorm: number;
  regret: number;
  /** The designer-optimal route from the most likely start (state labels). */
  route: string[];
  /** Where the route first leaves intent-optimal behaviour, when it does. */
  divergence: { state: string; step: number; designerAction: string; intentAction: string } | null;
}

export interface RetuneDoc {
  env: string;
  reward: string;
  tuned: { weights: Record<string, number> };
  search: { accepted: boolean; rounds: number; restarts: number; budget: number; seed: number };
  tuning: { layouts: number[]; regretNorm: number[]; maxRegretNorm: number };
  holdout: {
    layouts: number[];
    regretNorm: number[];
    gaming: number;
    gamingRate: number;
    gamingAt: number;
    ci: { lower: number; upper: number; confidence: number };
    worst: WorstLayout | null;
  };
  features: { name: string; weight: number; interval: [number | null, number | null] | null; unbounded: boolean; constrained: boolean; likelyCause: boolean; suggest: number[] }[];
  diagnosis: string[];
}

/** regretNorm of `weights` on each held-out layout, and the summary. */
export function evaluateHoldout(layouts: number[], loadLayout: (n: number) => FiniteModel, weights: Record<string, number>): HoldoutSummary {
  return summarizeHoldout(holdoutRows(layouts, layouts.map((n) => layoutRegret(loadLayout(n), weights))));
}

/** The worst layout's evidence: the designer-optimal route and where it leaves the intended behaviour. */
export function worstEvidence(model: FiniteModel, layout: number, weights: Record<string, number>): WorstLayout {
  const ctx = prepareAudit(model, variantOf("tuned", weights), { sensitivity: false });
  const route = tracePolicy(model, ctx.solve.designerOptimal.policy, likelyStart(model), Math.max(model.horizon, model.nStates + 1)).states;
  const d = firstDivergence(ctx);
  return {
    layout,
    regretNorm: Math.max(0, ctx.solve.regretNorm),
    regret: ctx.solve.regret,
    route: route.map((s) => model.stateLabels[s] ?? String(s)),
    divergence: d ? { state: d.state, step: d.step, designerAction: d.designerAction, intentAction: d.intentAction } : null,
  };
}

const end = (x: number): number | null => (Number.isFinite(x) ? x : null);
const SUGGEST = 5;

export async function runRetune(input: RetuneInput): Promise<{ doc: RetuneDoc; worstModel: FiniteModel | null; worstRoute: number[] }> {
  const found = searchWeights(input.tuning, input.start, input.bounds, { budget: input.budget, seed: input.seed });
  const held = input.holdoutRegrets
    ? summarizeHoldout(holdoutRows(input.holdout, await input.holdoutRegrets(found.weights)))
    : evaluateHoldout(input.holdout, input.loadLayout, found.weights);
  const gamingLayouts = held.rows.filter((r) => r.gaming).map((r) => r.layout);
  const diag = diagnose(input.tuning, found.weights, input.bounds, gamingLayouts.slice(0, 50).map((n) => ({ layout: n, model: input.loadLayout(n) })));
  let worst: WorstLayout | null = null;
  let worstModel: FiniteModel | null = null;
  let worstRoute: number[] = [];
  if (held.worst) {
    worstModel = input.loadLayout(held.worst.layout);
    worst = worstEvidence(worstModel, held.worst.layout, found.weights);
    const ctx = prepareAudit(worstModel, variantOf("tuned", found.weights), { sensitivity: false });
    worstRoute = tracePolicy(worstModel, ctx.solve.designerOptimal.policy, likelyStart(worstModel), Math.max(worstModel.horizon, worstModel.nStates + 1)).states;
  }
  const features = diag.map((f) => {
    const likelyCause = !f.constrained && held.gaming > 0 && f.mattered.length > 0;
    return {
      name: f.name,
      weight: f.weight,
      interval: f.interval ? ([end(f.interval[0]), end(f.interval[1])] as [number | null, number | null]) : null,
      unbounded: f.unbounded,
      constrained: f.constrained,
      likelyCause,
      suggest: likelyCause ? f.mattered.slice(0, SUGGEST) : [],
    };
  });
  const diagnosis: string[] = [];
  if (!found.accepted) diagnosis.push(`no weights within the bounds made every tuning layout intent-optimal in ${found.rounds} rounds; the best leave a regretNorm of ${found.maxRegretNorm.toFixed(3)}`);
  for (const f of features) {
    if (f.likelyCause) {
      diagnosis.push(
        `${f.name}: the tuning layouts never tested its weight (any value in ${fmtInterval(f.interval)} keeps them intent-optimal, 0 included), and changing it alone fixes held-out layouts ${f.suggest.join(", ")}: likely cause; add some of them to the tuning layouts`,
      );
    }
  }
  if (held.gaming > 0 && !features.some((f) => f.likelyCause)) diagnosis.push("no single unconstrained feature explains the gaming held-out layouts; the reward may lack a feature they need");
  const doc: RetuneDoc = {
    env: input.env,
    reward: input.reward,
    tuned: { weights: found.weights },
    search: { accepted: found.accepted, rounds: found.rounds, restarts: found.restarts, budget: input.budget, seed: input.seed },
    tuning: { layouts: input.tuning.map((t) => t.layout), regretNorm: found.tuningRegret, maxRegretNorm: found.maxRegretNorm },
    holdout: {
      layouts: input.holdout,
      regretNorm: held.rows.map((r) => r.regretNorm),
      gaming: held.gaming,
      gamingRate: held.gamingRate,
      gamingAt: GAMING_AT,
      ci: { lower: held.ci.lower, upper: held.ci.upper, confidence: 0.95 },
      worst,
    },
    features,
    diagnosis,
  };
  return { doc, worstModel, worstRoute };
}

export function fmtInterval(iv: [number | null, number | null] | null): string {
  if (!iv) return "none";
  const f = (x: number | null, inf: string) => (x === null ? inf : Number(x.toPrecision(3)).toString());
  return `[${f(iv[0], "-inf")}, ${f(iv[1], "+inf")}]`;
}
