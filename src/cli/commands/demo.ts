/**
 * `gapwatch demo`: Q-learning on every built-in scenario, once with each gaming and each sound reward
 * variant, and a table of which decoupled and at which checkpoint (first alert), with both series
 * as sparklines. Default budgets keep the whole demo to a few seconds.
 */
import type { Command } from "commander";
import { resolve } from "node:path";
import { builtinScenarioNames, readScenarioMeta } from "../../model/registry.js";
import { parseSeed } from "../../rng/rng.js";
import type { RunResult } from "../../run/schema.js";
import { runTraining } from "../../train/run.js";
import { action, type CliContext } from "../context.js";
import { emit, paint, table, useColor } from "../io.js";
import { writeReport } from "../../report/write.js";
import { CAUTION, sparklines, verdictColor } from "./train.js";

export interface DemoRow {
  env: string;
  reward: string;
  /** "gaming" or "sound", as the scenario labels the variant. */
  expected: "gaming" | "sound";
  verdict: RunResult["verdict"];
  firstAlertStep: number | null;
  steps: number;
  designerNorm: number | null;
  intentNorm: number | null;
  runDir: string;
  designerSpark: string;
  intentSpark: string;
}

export async function runDemo(opts: { runsDir: string; seed: number; learner?: string; signal?: { aborted: boolean } }): Promise<DemoRow[]> {
  const rows: DemoRow[] = [];
  for (const env of builtinScenarioNames()) {
    const meta = readScenarioMeta(env);
    const plan = [...meta.gaming.map((r) => [r, "gaming"] as const), ...meta.sound.map((r) => [r, "sound"] as const)];
    for (const [reward, expected] of plan) {
      if (opts.signal?.aborted) return rows;
      const r = await runTraining({ env, reward, seed: opts.seed, learner: opts.learner ?? "q-learning" }, { runsDir: opts.runsDir, signal: opts.signal });
      const sp = sparklines(r);
      rows.push({
        env,
        reward,
        expected,
        verdict: r.verdict,
        firstAlertStep: r.firstAlertStep,
        steps: r.steps,
        designerNorm: r.final?.designerNorm ?? null,
        intentNorm: r.final?.intentNorm ?? null,
        runDir: r.runDir,
        designerSpark: sp.designer,
        intentSpark: sp.intent,
      });
    }
  }
  return rows;
}

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
    .option("--runs-dir <dir>", "where run directories go (default ./runs)")
    .option("--report", "also write an HTML report into each run directory (report.html)")
    .option("--json", "print one JSON document")
    .action(
      action(ctx, async (opts: { seed?: string; runsDir?: string; report?: boolean; json?: boolean }) => {
        const seed = opts.seed === undefined ? 1 : parseSeed(opts.seed, "--seed");
        const runsDir = resolve(ctx.io.cwd, opts.runsDir ?? "runs");
        const signal = { aborted: false };
        const onInt = () => (signal.aborted = true);
        process.once("SIGINT", onInt);
        let rows: DemoRow[];
        try {
          rows = await runDemo({ runsDir, seed, signal });
        } finally {
          process.removeListener("SIGINT", onInt);
        }
        const reports: string[] = [];
        if (opts.report) for (const row of rows) reports.push(await writeReport(row.runDir));
        const doc = {
          seed,
          runs: rows.map(({ designerSpark: _d, intentSpark: _i, ...rest }, i) => (opts.report ? { ...rest, report: reports[i] } : rest)),
        };
        emit(ctx.io, Boolean(opts.json), doc, () => {
          let t = demoText(rows, useColor(ctx.io));
          if (reports.length) t += `HTML reports: ${reports.length} written, e.g. ${reports.find((_, i) => rows[i].verdict === "decoupled") ?? reports[0]}\n`;
          return t;
        });
        return signal.aborted ? 130 : 0;
      }),
    );
}
