/**
 * `gapwatch demo`: the default learner on every built-in scenario, once with each gaming and each
 * sound reward variant, and a table of which decoupled and at which checkpoint (first alert), with
 * both series as sparklines. Default budgets keep the whole demo to a few seconds.
 */
import type { Command } from "commander";
import { resolve } from "node:path";
import { runDemoCommand, type DemoRow } from "../../app/demo.js";
import { EXIT } from "../../errors.js";
import { parseSeed } from "../../rng/rng.js";
import { action, type CliContext } from "../context.js";
import { CAUTION, emit, paint, table, useColor } from "../io.js";
import { withInterrupt } from "../interrupt.js";
import { jsonOption, runsDirOf, runsDirOption } from "../options.js";
import { verdictColor } from "./train.js";
import { sharedBudgetText } from "./demo-pressure.js";

export function demoText(rows: DemoRow[], color: boolean): string {
  const fmt = (x: number | null) => (x === null ? "-" : x.toFixed(2));
  let t = `${paint(color, "bold", "gapwatch demo")}: Q-learning on each built-in scenario, with its gaming and its sound reward variants\n\n`;
  t += table(
    ["scenario", "reward", "labelled", "verdict", "first alert", "steps", "designer", "intent", "designer series", "intent series"],
    rows.map((r) => [
      r.env,
      r.reward,
      r.expected,
      paint(color, verdictColor(r.verdict), r.verdict),
      r.firstAlertStep === null ? "-" : `step ${r.firstAlertStep}`,
      String(r.steps),
      fmt(r.designerNorm),
      fmt(r.intentNorm),
      r.designerSpark,
      r.intentSpark,
    ]),
    { color },
  );
  const hits = rows.filter((r) => (r.expected === "gaming") === (r.verdict === "decoupled")).length;
  t += `\n${hits} of ${rows.length} runs match the scenario's label (gaming -> decoupled, sound -> not decoupled).\n`;
  t += `Scores are normalized: 0 = uniform-random policy, 1 = the optimal policy for that score. Series run left to right over the checkpoints.\n`;
  t += `Run directories are under ${rows[0] ? resolve(rows[0].runDir, "..") : "the runs folder"}; \`gapwatch train --env <scenario> --reward <variant>\` repeats one.\n`;
  t += paint(color, "dim", CAUTION) + "\n";
  return t;
}

export function registerDemo(program: Command, ctx: CliContext): void {
  program
    .command("demo")
    .description("train Q-learning on every built-in scenario with its gaming and sound rewards; show which decoupled and where")
    .option("--seed <s>", "seed (default 1)")
    .addOption(runsDirOption())
    .option("--report", "also write an HTML report into each run directory (report.html)")
    .addOption(jsonOption())
    .action(
      action(ctx, async (opts: { seed?: string; runsDir?: string; report?: boolean; json?: boolean }) => {
        const seed = opts.seed === undefined ? 1 : parseSeed(opts.seed, "--seed");
        const runsDir = runsDirOf(ctx.io, opts);
        const { value: out, aborted } = await withInterrupt((signal) => runDemoCommand({ runsDir, seed, report: opts.report, signal }));
        const { rows, reports, sharedBudget, doc } = out;
        emit(ctx.io, Boolean(opts.json), doc, () => {
          let t = demoText(rows, useColor(ctx.io));
          if (sharedBudget) t += sharedBudgetText(sharedBudget, useColor(ctx.io));
          t += "\n" + out.layoutLines.join("\n") + "\n";
          if (reports.length) t += `HTML reports: ${reports.length} written, e.g. ${reports.find((_, i) => rows[i].verdict === "decoupled") ?? reports[0]}\n`;
          return t;
        });
        return aborted ? EXIT.interrupted : EXIT.ok;
      }),
    );
}
