/**
 * Optional pressure axis: tabular Q-learning (policies/) trained on the learner view at increasing step
 * budgets, each greedy policy evaluated exactly on designer reward and intent. Seeded, deterministic.
 */
import { train } from "../../policies/index.js";
import { learnerView, viewEnv } from "../model/learner-view.js";
import { designerReward } from "../model/reward.js";
import type { FiniteModel, RewardVariant } from "../model/types.js";
import { createRng } from "../rng/rng.js";
import { policyValuesMany } from "../solve/default-solver.js";
import { deterministicPolicy, startValue } from "../solve/policy.js";

export interface LearnerPoint {
  steps: number;
  designer: number;
  intent: number;
}

export function learnerCurve(model: FiniteModel, variant: RewardVariant, opts: { seed: number; budgets?: number[] }): LearnerPoint[] {
  const rd = designerReward(model, variant);
  const budgets = opts.budgets ?? [1_000, 3_000, 10_000, 30_000, 100_000];
  const out: LearnerPoint[] = [];
  for (const steps of budgets) {
    const env = viewEnv(learnerView(model, rd));
    const res = train(env, { learner: "q-learning" }, { steps, rng: createRng(opts.seed) });
    const pol = deterministicPolicy(model, res.agent.greedyPolicy(model.nStates));
    for (let s = 0; s < model.nStates; s++) if (model.terminal[s]) for (let a = 0; a < model.nActions; a++) pol[s * model.nActions + a] = 1 / model.nActions;
    const [designer, intent] = policyValuesMany(model, [rd, model.intent], pol).map((e) => startValue(model, e.values));
    out.push({ steps, designer, intent });
  }
  return out;
}
