import type { Command } from "commander";
import { runPressure } from "../../app/pressure.js";
import { commandLine } from "../../report/standalone.js";
import { action, intOption, type CliContext } from "../context.js";
import { emit, formatNumber, paint, useColor } from "../io.js";
import type { PressureCurve } from "../../pressure/curve.js";
import type { LearnerPoint } from "../../pressure/learners.js";
import { normalizeScore, pressureSparklines } from "../../report/terminal.js";
import { worseThanRandom } from "../../util/share.js";
import { envOf, envOption, layoutOption, jsonOption, maxStatesOf, maxStatesOption, reportOption, rewardOption, runsDirOption } from "../options.js";
import { documentOutputs, printWritten, type DocumentOutputFlags } from "./audit.js";

/** The human output of `gapwatch pressure`: env and reward, normalized sparklines on one scale, the optimum for scale, peak and onset. */
export function pressureText(curve: PressureCurve, learners: LearnerPoint[] | undefined, env: string, reward: string, color: boolean, reference?: string): string {
  const pts = curve.points;
  const first = pts[0];
  const last = pts[pts.length - 1];
  if (!first || !last) return `${env}  reward ${reward}: no points\n`;
  const sp = pressureSparklines(curve);
  const f2 = (x: number) => x.toFixed(2);
  const { designer: ds, intent: is } = curve.scale;
  let text = `${paint(color, "bold", env)}  reward ${paint(color, "bold", reward)}\n`;
  text += `${pts.length} soft-optimal policies of increasing strength toward the designer reward, from the reference (${reference ?? "uniform random"}) at strength 0 to near-greedy at ${formatNumber(last.strength)}\n`;
  text += `designer and intent normalized on one scale: 0 = uniform random, 1 = optimal for that score\n\n`;
  text += `designer ${sp.designer}  ${f2(sp.designerNorm[0])} -> ${f2(sp.designerNorm[pts.length - 1])}   (raw ${formatNumber(first.designer)} -> ${formatNumber(last.designer)}; random ${formatNumber(ds.random)}, optimum ${formatNumber(ds.optimum)})\n`;
  text += `intent   ${sp.intent}  ${f2(sp.intentNorm[0])} -> ${f2(sp.intentNorm[pts.length - 1])}   (raw ${formatNumber(first.intent)} -> ${formatNumber(last.intent)}; random ${formatNumber(is.random)}, intent optimum ${formatNumber(is.optimum)})\n`;
  text += `KL       ${sp.kl}  ${formatNumber(first.kl)} -> ${formatNumber(last.kl)}   (divergence from the reference, own scale from 0)\n\n`;
  const peakNorm = normalizeScore(curve.peak.intent, is);
  text += `peak intent ${formatNumber(curve.peak.intent)} (${peakNorm < 0 ? worseThanRandom(peakNorm) : `${f2(peakNorm)} on the normalized scale`}) at strength ${formatNumber(curve.peak.strength)}; the intent optimum is ${formatNumber(is.optimum)}\n`;
  text +=
    curve.onset === null
      ? paint(color, "green", "no onset of over-optimization: past its peak, intent does not fall while designer return rises") + "\n"
      : paint(color, "red", `over-optimization sets in after strength ${formatNumber(curve.onset)}: beyond it intent falls (to ${formatNumber(last.intent)} at the greedy end) while designer return still rises`) + "\n";
  if (learners) {
    text += `\nQ-learning greedy policies by step budget:\n`;
    for (const l of learners) text += `  ${String(l.steps).padStart(8)} steps  designer ${formatNumber(l.designer)}  intent ${formatNumber(l.intent)}\n`;
  }
  return text;
}

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
        const { curve, learners, env, reward, written, doc } = await runPressure({
          env: envOf(opts),
          reward: opts.reward,
          reference: opts.reference,
          learners: opts.learners,
          seed,
          maxStates: maxStatesOf(opts),
          command: commandLine(args),
          ...outputs,
        });
        emit(ctx.io, Boolean(opts.json), doc, () => pressureText(curve, learners, env, reward, useColor(ctx.io), opts.reference));
        if (!opts.json) printWritten(ctx, "pressure", written);
      }),
    );
}
