import type { Command } from "commander";
import { loadEnv, resolveReward } from "../../model/registry.js";
import type { FiniteModel } from "../../model/types.js";
import { drawRoute } from "../../report/terminal.js";
import { solveVariant, type SolveReport } from "../../solve/compare.js";
import { requireFinite } from "../../sim/finite.js";
import { action, numberOption, type CliContext } from "../context.js";
import { CAUTION, emit, formatNumber, paint, table, useColor } from "../io.js";

export interface SolveConfig {
  env: string;
  reward?: string;
  gamma?: number;
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

export async function runSolve(cfg: SolveConfig) {
  const loaded = await loadEnv(cfg.env);
  const model = requireFinite(loaded, "solve");
  const variant = resolveReward(model, cfg.reward);
  const report = solveVariant(model, variant, { gamma: cfg.gamma });
  return { model, report, doc: solveDocument(model, report) };
}

export function registerSolve(program: Command, ctx: CliContext): void {
  program
    .command("solve")
    .description("solve the designer reward and the intent exactly; show what the designer-optimal policy gives up")
    .requiredOption("--env <env>", "built-in scenario name, model file (.json) or simulator module")
    .option("--reward <reward>", "reward variant name or reward file (default: the variant named default, else the first)")
    .option("--gamma <gamma>", "discount factor (default: the model's)")
    .option("--json", "print one JSON document")
    .action(
      action(ctx, async (opts: { env: string; reward?: string; gamma?: string; json?: boolean }) => {
        const gamma = opts.gamma === undefined ? undefined : numberOption(opts.gamma, "--gamma", { min: 1e-9, max: 1 });
        const { model, report: r, doc } = await runSolve({ env: opts.env, reward: opts.reward, gamma });
        emit(ctx.io, Boolean(opts.json), doc, () => {
          const color = useColor(ctx.io);
          const pct = (x: number) => `${(100 * x).toFixed(1)}%`;
          let text = `${paint(color, "bold", r.env)}  reward ${paint(color, "bold", r.reward)}  gamma ${r.gamma}  states ${r.states}\n\n`;
          text += table(
            ["policy", "designer return", "intent score"],
            [
              ["designer-optimal", r.designerOptimal.designer, r.designerOptimal.intent],
              ["intent-optimal", r.intentOptimal.designer, r.intentOptimal.intent],
              ["uniform random", r.random.designer, r.random.intent],
            ],
            { color },
          );
          const bad = r.regretNorm >= 0.3;
          const verdict = bad
            ? paint(color, "red", `optimizing this reward gives up ${pct(r.regretNorm)} of the achievable intent`)
            : paint(color, "green", `optimizing this reward keeps ${pct(1 - r.regretNorm)} of the achievable intent`);
          text += `\nregret ${formatNumber(r.regret)} (${pct(r.regretNorm)} of the range above random): ${verdict}\n`;
          const dRoute = drawRoute(model, r.designerOptimal.policy);
          const iRoute = drawRoute(model, r.intentOptimal.policy);
          if (dRoute) text += `\ndesigner-optimal route:\n${dRoute}\nintent-optimal route:\n${iRoute}`;
          text += `\nExact values on the model. ${CAUTION}\n`;
          return text;
        });
      }),
    );
}
