import type { Command } from "commander";
import { runPressure } from "../../app/pressure.js";
import { commandLine } from "../../report/standalone.js";
import { action, intOption, type CliContext } from "../context.js";
import { emit, formatNumber, paint, sparkline, useColor } from "../io.js";
import { envOf, envOption, layoutOption, jsonOption, maxStatesOf, maxStatesOption, reportOption, rewardOption, runsDirOption } from "../options.js";
import { documentOutputs, printWritten, type DocumentOutputFlags } from "./audit.js";

export function registerPressure(program: Command, ctx: CliContext): void {
  program
    .command("pressure")
    .description("designer return and intent of soft-optimal policies of increasing optimization strength (the Goodhart curve)")
    .addOption(envOption())
    .addOption(layoutOption())
    .addOption(rewardOption())
    .option("--reference <file>", "reference policy (JSON with a \"policy\" array, e.g. a train run's policy.json); default uniform random")
    .option("--learners", "also train tabular Q-learning at increasing step budgets and evaluate each greedy policy exactly")
    .option("--seed <n>", "seed for --learners (default 1)")
    .addOption(reportOption("a standalone HTML report and its pressure JSON beside it", "<runs-dir>/pressure-<env>-<reward>.html"))
    .addOption(runsDirOption("where --report goes by default"))
    .option("--run-dir <dir>", "also write pressure.json into this run or comparison directory, for gapwatch report")
    .addOption(maxStatesOption())
    .addOption(jsonOption())
    .action(
      action(ctx, async (opts: { env: string; reward?: string; reference?: string; learners?: boolean; seed?: string; maxStates?: string; json?: boolean } & DocumentOutputFlags) => {
        const seed = opts.seed === undefined ? undefined : intOption(opts.seed, "--seed", { min: 0 });
        const outputs = documentOutputs(ctx, opts);
        const args = ["gapwatch", "pressure", "--env", envOf(opts), ...(opts.reward !== undefined ? ["--reward", opts.reward] : []), ...(opts.reference !== undefined ? ["--reference", opts.reference] : []), ...(opts.learners ? ["--learners"] : []), ...(opts.seed !== undefined ? ["--seed", opts.seed] : [])];
        const { curve, learners, written, doc } = await runPressure({
          env: envOf(opts),
          reward: opts.reward,
          reference: opts.reference,
          learners: opts.learners,
          seed,
          maxStates: maxStatesOf(opts),
          command: commandLine(args),
          ...outputs,
        });
        emit(ctx.io, Boolean(opts.json), doc, () => {
          const color = useColor(ctx.io);
          const pts = curve.points;
          let text = `strength beta ${formatNumber(pts[0]?.strength ?? 0)} .. ${formatNumber(pts[pts.length - 1]?.strength ?? 0)} (${pts.length} soft-optimal policies, left = reference)\n`;
          text += `designer ${sparkline(pts.map((p) => p.designer))}  ${formatNumber(pts[0].designer)} -> ${formatNumber(pts[pts.length - 1].designer)}\n`;
          text += `intent   ${sparkline(pts.map((p) => p.intent))}  ${formatNumber(pts[0].intent)} -> ${formatNumber(pts[pts.length - 1].intent)}\n`;
          text += `KL       ${sparkline(pts.map((p) => p.kl))}  ${formatNumber(pts[0].kl)} -> ${formatNumber(pts[pts.length - 1].kl)}\n\n`;
          text += `peak intent ${formatNumber(curve.peak.intent)} at strength ${formatNumber(curve.peak.strength)}\n`;
          text +=
            curve.onset === null
              ? paint(color, "green", "no onset of over-optimization: intent does not fall while designer return rises") + "\n"
              : paint(color, "red", `over-optimization sets in after strength ${formatNumber(curve.onset)}: beyond it intent falls while designer return still rises`) + "\n";
          if (learners) {
            text += `\nQ-learning greedy policies by step budget:\n`;
            for (const l of learners) text += `  ${String(l.steps).padStart(8)} steps  designer ${formatNumber(l.designer)}  intent ${formatNumber(l.intent)}\n`;
          }
          return text;
        });
        if (!opts.json) printWritten(ctx, "pressure", written);
      }),
    );
}
