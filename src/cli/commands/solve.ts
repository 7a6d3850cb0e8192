import type { Command } from "commander";
import { runSolve } from "../../app/solve.js";
import { regretText } from "../../util/share.js";
import { drawRoute } from "../../report/terminal.js";
import { STATIC_CAUTION } from "../caution.js";
import { action, numberOption, type CliContext } from "../context.js";
import { emit, formatNumber, paint, table, useColor } from "../io.js";
import { envOf, envOption, layoutOption, jsonOption, maxItersOf, maxItersOption, maxStatesOf, maxStatesOption, rewardOption } from "../options.js";

export function registerSolve(program: Command, ctx: CliContext): void {
  program
    .command("solve")
    .description("solve the designer reward and the intent exactly; show what the designer-optimal policy gives up")
    .addOption(envOption())
    .addOption(layoutOption())
    .addOption(rewardOption())
    .option("--gamma <gamma>", "discount factor (default: the model's)")
    .addOption(maxItersOption())
    .addOption(maxStatesOption())
    .addOption(jsonOption())
    .action(
      action(ctx, async (opts: { env: string; reward?: string; gamma?: string; maxIters?: string; maxStates?: string; json?: boolean }) => {
        const gamma = opts.gamma === undefined ? undefined : numberOption(opts.gamma, "--gamma", { min: 1e-9, max: 1 });
        const { model, report: r, doc } = await runSolve({ env: envOf(opts), reward: opts.reward, gamma, maxIters: maxItersOf(opts), maxStates: maxStatesOf(opts) });
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
            ? paint(color, "red", `optimizing this reward ${regretText(r.regretNorm)}`)
            : paint(color, "green", `optimizing this reward keeps ${pct(1 - r.regretNorm)} of the achievable intent`);
          const share = r.regretNorm <= 1 ? ` (${pct(r.regretNorm)} of the range above random)` : "";
          text += `\nregret ${formatNumber(r.regret)}${share}: ${verdict}\n`;
          const dRoute = drawRoute(model, r.designerOptimal.policy, { legend: false });
          const iRoute = drawRoute(model, r.intentOptimal.policy);
          if (dRoute) text += `\ndesigner-optimal route:\n${dRoute}\nintent-optimal route:\n${iRoute}`;
          text += `\nExact values on the model. ${STATIC_CAUTION}\n`;
          return text;
        });
      }),
    );
}
