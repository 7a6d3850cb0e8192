/**
 * `gapwatch report <run-dir | comparison-dir>`: write one self-contained HTML report of a training
 * run or a comparison (with audit.json / pressure.json when present beside it or given), print its
 * path, and with --open hand it to the desktop's opener (xdg-open) when there is one.
 */
import type { Command } from "commander";
import { OPENERS, runReportCommand } from "../../app/report.js";
import { action, type CliContext } from "../context.js";
import { emit, paint, useColor } from "../io.js";
import { jsonOption } from "../options.js";

export interface ReportCommandOptions {
  out?: string;
  open?: boolean;
  audit?: string;
  pressure?: string;
  json?: boolean;
}

export function registerReport(program: Command, ctx: CliContext): void {
  program
    .command("report")
    .description("write a self-contained HTML report of a run or comparison directory (charts, alerts, audit, manifest)")
    .argument("<dir>", "a run directory (with manifest.json) or a comparison directory (with comparison.json)")
    .option("--out <file>", "where to write the report (default: <dir>/report.html)")
    .option("--audit <file>", "include this audit.json (default: <dir>/audit.json when present)")
    .option("--pressure <file>", "include this pressure.json (default: <dir>/pressure.json when present)")
    .option("--open", "open the report with xdg-open (or open) when one is on PATH; else say where the file is")
    .addOption(jsonOption())
    .action(
      action(ctx, async (dir: string, opts: ReportCommandOptions) => {
        const { path, opened, doc } = await runReportCommand({ dir, out: opts.out, audit: opts.audit, pressure: opts.pressure, open: opts.open, env: ctx.io.env });
        // On stderr, so it shows with --json too: asked to open, could not.
        if (opts.open && !opened) ctx.io.err(`report: no opener found on PATH (${OPENERS.join(", ")}); the report is at ${path}\n`);
        emit(ctx.io, Boolean(opts.json), doc, () => `${paint(useColor(ctx.io), "bold", "report")} ${path}\n`);
      }),
    );
}
