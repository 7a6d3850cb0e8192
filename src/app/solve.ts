/** `gapwatch solve`: solve the designer reward and the intent exactly on the finite model. */
import { InputError } from "../errors.js";
import { loadFiniteVariant } from "../env/resolve.js";
import type { FiniteModel } from "../model/types.js";
import { solveVariant, type SolveReport } from "../solve/compare.js";
import { EXACT_GAMMA } from "../solve/exact.js";

export interface SolveConfig {
  env: string;
  reward?: string;
  gamma?: number;
  /** Iteration cap of the solvers (value-iteration sweeps; policy improvements above gamma 0.999). */
  maxIters?: number;
  /** State bound when `env` is a simulator module. */
  maxStates?: number;
}

function policyNames(model: FiniteModel, policy: Int32Array): (string | null)[] {
  return Array.from(policy, (a) => (a < 0 ? null : model.actions[a]));
}

/** The JSON document of `gapwatch solve`. */
export function solveDocument(model: FiniteModel, r: SolveReport) {
  return {
    env: r.env,
    reward: r.reward,
    gamma: r.gamma,
    states: r.states,
    designerOptimal: {
      values: Array.from(r.designerOptimal.values),
      policy: policyNames(model, r.designerOptimal.policy),
      designer: r.designerOptimal.designer,
      intent: r.designerOptimal.intent,
    },
    intentOptimal: {
      values: Array.from(r.intentOptimal.values),
      policy: policyNames(model, r.intentOptimal.policy),
      intent: r.intentOptimal.intent,
    },
    random: r.random,
    regret: r.regret,
    regretNorm: r.regretNorm,
  };
}

/** Solve; `doc` is what `solve --json` prints, `model` and `report` are for drawing routes. */
export async function runSolve(cfg: SolveConfig) {
  const { model, variant } = await loadFiniteVariant(cfg.env, cfg.reward, { command: "solve", maxStates: cfg.maxStates });
  const report = solveVariant(model, variant, { gamma: cfg.gamma, maxIters: cfg.maxIters });
  if (!report.converged) {
    const how = report.gamma > EXACT_GAMMA ? "policy iteration did not settle" : "value iteration did not converge";
    throw new InputError(
      "solve.notConverged",
      `${how} within ${cfg.maxIters ?? "the default"} iterations at gamma ${report.gamma}: the values are not exact; raise --max-iters${report.gamma >= 1 ? " or use a discount below 1" : ""}`,
    );
  }
  return { model, report, doc: solveDocument(model, report) };
}
