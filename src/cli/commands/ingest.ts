/**
 * `gapwatch ingest <path>...`: watch an external training log (event files, episode-monitor CSV,
 * CSV/TSV, JSON lines) with the noise-aware monitor and store it as a run.
 * Exit codes: 0 done, 2 bad input, 3 an alert fired and --fail-on-alert was given, 130 interrupted.
 */
import type { Command } from "commander";
import { runIngest } from "../../app/ingest.js";
import { EXIT, InputError, printableLine } from "../../errors.js";
import { parseFormat } from "../../ingest/index.js";
import { parseRange } from "../../monitor/external.js";
import { action, intOption, numberOption, type CliContext } from "../context.js";
import { emit, paint, useColor } from "../io.js";
import { withInterrupt } from "../interrupt.js";
import { jsonOption, reportOf, reportOption, runsDirOf, runsDirOption } from "../options.js";
import { alertsText, verdictColor } from "./train.js";
import { resolve } from "node:path";

/** The caution of an external run's text summary (the trained-run one names an environment and a learner). */
export const EXTERNAL_CAUTION =
  "A clean result is evidence, not certification: it covers this log, read with this mapping and these ranges, only; on noisy logs a real but slow or small fall can go undetected. For safety-relevant uses follow your domain's safety standards and licensed practice.";

export interface IngestCliOptions {
  designer: string;
  intent: string;
  format?: string;
  step?: string;
  window?: string;
  rolling?: string;
  run?: string;
  designerRange?: string;
  intentRange?: string;
  follow?: boolean;
  untilStep?: string;
  idle?: string;
  runsDir?: string;
  failOnAlert?: boolean;
  json?: boolean;
  report?: boolean | string;
}

export function registerIngest(program: Command, ctx: CliContext): void {
  program
    .command("ingest")
    .description("watch an external training log (event files, episode-monitor CSV, CSV/TSV, JSON lines): designer vs intent, alerts, verdict; stored as a run")
    .argument("<path...>", "log files or folders (a folder: every event file in it, one run per subfolder)")
    .requiredOption("--designer <name>", "tag or column holding the designer score (the reward being optimized)")
    .requiredOption("--intent <name>", "tag or column holding the intended-outcome score")
    .option("--format <f>", "force the format: tfevents, monitor-csv, csv, jsonl (default: detected from content)")
    .option("--step <name>", "step column of a CSV/TSV or JSON-lines table (default: step, global_step, _step or timesteps)")
    .option("--window <steps>", "steps per checkpoint when the log holds episodes (default: about ten episodes)")
    .option("--rolling <n>", "checkpoint value = mean of the last n episodes by the window end (as trainers log it)")
    .option("--run <key>", "which run, when a name exists in several (a subfolder or an input path)")
    .option("--designer-range <low:high>", "designer score of a random policy and of the intended behaviour, in the log's units")
    .option("--intent-range <low:high>", "intent score of a random policy and of the intended behaviour, in the log's units")
    .option("--follow", "keep reading as the log grows; print alerts as they fire; Ctrl-C stops")
    .option("--until-step <n>", "with --follow: stop once the log reaches this step")
    .option("--idle <seconds>", "with --follow: stop after this long without new data")
    .addOption(runsDirOption())
    .option("--fail-on-alert", "exit 3 when any alert fired (for CI gating of a training job)")
    .addOption(reportOption("the HTML report of the run", "<run-dir>/report.html"))
    .addOption(jsonOption())
    .action(
      action(ctx, async (paths: string[], opts: IngestCliOptions) => {
        if (!opts.follow && (opts.untilStep !== undefined || opts.idle !== undefined)) {
          throw new InputError("cli.follow", `${opts.untilStep !== undefined ? "--until-step" : "--idle"} only applies with --follow`, opts.untilStep !== undefined ? "--until-step" : "--idle");
        }
        const color = useColor(ctx.io, Boolean(opts.json));
        const cfg = {
          paths: paths.map((p) => resolve(ctx.io.cwd, p)),
          designer: opts.designer,
          intent: opts.intent,
          format: opts.format === undefined ? undefined : parseFormat(opts.format, "--format"),
          step: opts.step,
          window: opts.window === undefined ? undefined : numberOption(opts.window, "--window", { min: Number.MIN_VALUE }),
          rolling: opts.rolling === undefined ? undefined : intOption(opts.rolling, "--rolling"),
          run: opts.run,
          designerRange: opts.designerRange === undefined ? undefined : parseRange(opts.designerRange, "--designer-range"),
          intentRange: opts.intentRange === undefined ? undefined : parseRange(opts.intentRange, "--intent-range"),
          runsDir: runsDirOf(ctx.io, opts),
          report: reportOf(ctx.io, opts.report),
          follow: opts.follow
            ? {
                untilStep: opts.untilStep === undefined ? undefined : intOption(opts.untilStep, "--until-step", { min: 0 }),
                idleSeconds: opts.idle === undefined ? undefined : numberOption(opts.idle, "--idle", { min: 0 }),
              }
            : undefined,
          onNotice: opts.follow && !opts.json ? (text: string) => ctx.io.err(`${paint(color, "dim", printableLine(text))}\n`) : undefined,
          onAlert: opts.follow ? (a: { step: number; kind: string; message: string }) => ctx.io.err(`alert at step ${a.step}: ${paint(color, "red", a.kind)}: ${printableLine(a.message)}\n`) : undefined,
        };
        const { value: out } = await withInterrupt((signal) => runIngest({ ...cfg, signal }));
        const r = out.result;
        emit(ctx.io, Boolean(opts.json), out.doc, () => {
          const src = r.source!;
          let t = `${paint(color, "bold", "external run")}  ${src.files.length} file(s), ${src.format}  designer ${JSON.stringify(src.mapping.designer)}  intent ${JSON.stringify(src.mapping.intent)}  checkpoints ${r.checkpoints.length}${src.window !== null ? `  window ${src.window} steps` : ""}\n`;
          t += `verdict: ${paint(color, verdictColor(r.verdict), r.verdict)}${r.status !== "complete" ? ` (${r.status})` : ""}\n  ${r.reason}\n\n`;
          t += r.alerts.length > 0 ? alertsText(r.alerts, color) : "no alerts\n";
          t += `\nrun directory: ${r.runDir}\n${paint(color, "dim", EXTERNAL_CAUTION)}\n`;
          return t;
        });
        if (out.report && !opts.json) ctx.io.err(`report: ${out.report}\n`);
        if (r.status === "interrupted") return EXIT.interrupted;
        if (opts.failOnAlert && r.alerts.length > 0) return EXIT.gate;
        return EXIT.ok;
      }),
    );
}
