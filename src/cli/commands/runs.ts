/**
 * `gapwatch runs`: list and filter the runs recorded in `<runs-dir>/index.db` (and the comparisons);
 * `--rebuild` regenerates the index from the run directories. A missing index is rebuilt on the fly.
 */
import type { Command } from "commander";
import { listRuns } from "../../app/runs.js";
import { InputError } from "../../errors.js";
import { action, type CliContext } from "../context.js";
import { emit, paint, table, useColor } from "../io.js";
import { jsonOption, runsDirOf, runsDirOption } from "../options.js";

const VERDICTS = ["aligned", "decoupled", "inconclusive"];

export function registerRuns(program: Command, ctx: CliContext): void {
  program
    .command("runs")
    .description("list the runs and comparisons stored under the runs directory (SQLite index runs/index.db)")
    .option("--env <env>", "only this environment")
    .option("--reward <reward>", "only this reward variant")
    .option("--learner <learner>", "only this learner")
    .option("--verdict <v>", "only aligned, decoupled or inconclusive runs")
    .addOption(runsDirOption("the runs directory"))
    .option("--rebuild", "rebuild the index from the run directories first")
    .addOption(jsonOption())
    .action(
      action(ctx, async (opts: { env?: string; reward?: string; learner?: string; verdict?: string; runsDir?: string; rebuild?: boolean; json?: boolean }) => {
        if (opts.verdict !== undefined && !VERDICTS.includes(opts.verdict)) {
          throw new InputError("cli.verdict", `--verdict expects ${VERDICTS.join(", ")}, got "${opts.verdict}"`, "--verdict");
        }
        const { runs, comparisons, rebuilt, doc, persisted } = listRuns({ runsDir: runsDirOf(ctx.io, opts), env: opts.env, reward: opts.reward, learner: opts.learner, verdict: opts.verdict, rebuild: opts.rebuild });
        emit(ctx.io, Boolean(opts.json), doc, () => {
          const color = useColor(ctx.io);
          let t = persisted ? "" : `(no index file in ${doc.index.replace(/[\\/]index\.db$/, "")}: listed from the run folders, nothing written; gapwatch runs --rebuild writes one)\n\n`;
          t += rebuilt ? `rebuilt ${doc.index}: ${rebuilt.runs} runs, ${rebuilt.comparisons} comparisons${rebuilt.skipped.length ? `, skipped ${rebuilt.skipped.join(", ")}` : ""}\n\n` : "";
          const vc = (v: string) => paint(color, v === "aligned" ? "green" : v === "decoupled" ? "red" : "yellow", v);
          // External runs (gapwatch ingest) add a source column naming the log files they read.
          const withSource = runs.some((r) => r.source !== undefined);
          t += table(
            ["env", "reward", "learner", "seed", "status", "verdict", "designer", "intent", "alerts", "run", ...(withSource ? ["source"] : [])],
            runs.map((r) => [
              r.env,
              r.reward,
              r.learner,
              r.seed,
              r.status === "complete" ? r.status : paint(color, "yellow", r.status),
              vc(r.verdict),
              r.designer === null ? "-" : r.designer.toFixed(2),
              r.intent === null ? "-" : r.intent.toFixed(2),
              r.alerts,
              r.runId,
              ...(withSource ? [r.source ?? "-"] : []),
            ]),
            { color },
          );
          t += `${runs.length} run(s)\n`;
          if (comparisons.length) {
            t += `\n` + table(["comparison", "env", "variants", "seeds", "runs", "failed", "best (intent IQM)", "time"], comparisons.map((c) => [c.id, c.env, c.rewards.join(","), c.seeds.length, c.runs, c.failed, c.ranking[0] ?? "-", c.time]), { color });
          }
          return t;
        });
      }),
    );
}
