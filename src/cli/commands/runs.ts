/**
 * `gapwatch runs`: list and filter the runs recorded in `<runs-dir>/index.db` (and the comparisons);
 * `--rebuild` regenerates the index from the run directories. A missing index is rebuilt on the fly.
 */
import type { Command } from "commander";
import { resolve } from "node:path";
import { InputError } from "../../errors.js";
import { openIndex, openIndexForReading, RunIndex } from "../../store/index-db.js";
import { action, type CliContext } from "../context.js";
import { emit, paint, table, useColor } from "../io.js";

const VERDICTS = ["aligned", "decoupled", "inconclusive"];

export function registerRuns(program: Command, ctx: CliContext): void {
  program
    .command("runs")
    .description("list the runs and comparisons stored under the runs directory (SQLite index runs/index.db)")
    .option("--env <env>", "only this environment")
    .option("--reward <reward>", "only this reward variant")
    .option("--learner <learner>", "only this learner")
    .option("--verdict <v>", "only aligned, decoupled or inconclusive runs")
    .option("--runs-dir <dir>", "the runs directory (default ./runs)")
    .option("--rebuild", "rebuild the index from the run directories first")
    .option("--json", "print one JSON document")
    .action(
      action(ctx, async (opts: { env?: string; reward?: string; learner?: string; verdict?: string; runsDir?: string; rebuild?: boolean; json?: boolean }) => {
        if (opts.verdict !== undefined && !VERDICTS.includes(opts.verdict)) {
          throw new InputError("cli.verdict", `--verdict expects ${VERDICTS.join(", ")}, got "${opts.verdict}"`, "--verdict");
        }
        const runsDir = resolve(ctx.io.cwd, opts.runsDir ?? "runs");
        let rebuilt: ReturnType<RunIndex["rebuild"]> | undefined;
        // Listing creates nothing; --rebuild (an explicit write) may create the index file.
        const { index: ix, persisted } = opts.rebuild ? { index: openIndex(runsDir), persisted: true } : openIndexForReading(runsDir);
        try {
          if (opts.rebuild) rebuilt = ix.rebuild();
          const runs = ix.listRuns({ env: opts.env, reward: opts.reward, learner: opts.learner, verdict: opts.verdict });
          const comparisons = opts.reward || opts.verdict || opts.learner ? [] : ix.listComparisons({ env: opts.env });
          const doc = { index: ix.file, runs, comparisons, ...(rebuilt ? { rebuilt } : {}) };
          emit(ctx.io, Boolean(opts.json), doc, () => {
            const color = useColor(ctx.io);
            let t = persisted ? "" : `(no index file in ${runsDir}: listed from the run folders, nothing written; gapwatch runs --rebuild writes one)\n\n`;
            t += rebuilt ? `rebuilt ${ix.file}: ${rebuilt.runs} runs, ${rebuilt.comparisons} comparisons${rebuilt.skipped.length ? `, skipped ${rebuilt.skipped.join(", ")}` : ""}\n\n` : "";
            const vc = (v: string) => paint(color, v === "aligned" ? "green" : v === "decoupled" ? "red" : "yellow", v);
            t += table(
              ["env", "reward", "learner", "seed", "status", "verdict", "designer", "intent", "alerts", "run"],
              runs.map((r) => [r.env, r.reward, r.learner, r.seed, r.status === "complete" ? r.status : paint(color, "yellow", r.status), vc(r.verdict), r.designer === null ? "-" : r.designer.toFixed(2), r.intent === null ? "-" : r.intent.toFixed(2), r.alerts, r.runId]),
              { color },
            );
            t += `${runs.length} run(s)\n`;
            if (comparisons.length) {
              t += `\n` + table(["comparison", "env", "variants", "seeds", "runs", "failed", "best (intent IQM)", "time"], comparisons.map((c) => [c.id, c.env, c.rewards.join(","), c.seeds.length, c.runs, c.failed, c.ranking[0] ?? "-", c.time]), { color });
            }
            return t;
          });
        } finally {
          ix.close();
        }
      }),
    );
}
