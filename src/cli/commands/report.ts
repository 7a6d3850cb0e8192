/**
 * `gapwatch report <run-dir | comparison-dir>`: write one self-contained HTML report of a training
 * run or a comparison (with audit.json / pressure.json when present beside it or given), print its
 * path, and with --open hand it to the desktop's opener (xdg-open) when there is one.
 */
import { spawn } from "node:child_process";
import { existsSync } from "node:fs";
import { delimiter, join } from "node:path";
import type { Command } from "commander";
import { writeReport } from "../../report/write.js";
import { action, type CliContext } from "../context.js";
import { emit, paint, useColor, type CliIO } from "../io.js";

export interface ReportCommandOptions {
  out?: string;
  open?: boolean;
  audit?: string;
  pressure?: string;
  json?: boolean;
}

/** The opener on PATH (xdg-open), or null. */
export function findOpener(env: Record<string, string | undefined>): string | null {
  for (const dir of (env.PATH ?? "").split(delimiter)) {
    if (!dir) continue;
    const p = join(dir, "xdg-open");
    if (existsSync(p)) return p;
  }
  return null;
}

function openFile(io: CliIO, file: string): boolean {
  const opener = findOpener(io.env);
  if (!opener) return false;
  const child = spawn(opener, [file], { detached: true, stdio: "ignore" });
  child.on("error", () => undefined);
  child.unref();
  return true;
}

export async function runReportCommand(io: CliIO, dir: string, opts: ReportCommandOptions): Promise<{ path: string; opened: boolean }> {
  const path = await writeReport(dir, { out: opts.out, audit: opts.audit, pressure: opts.pressure });
  const opened = opts.open ? openFile(io, path) : false;
  return { path, opened };
}

export function registerReport(program: Command, ctx: CliContext): void {
  program
    .command("report")
    .description("write a self-contained HTML report of a run or comparison directory (charts, alerts, audit, manifest)")
    .argument("<dir>", "a run directory (with manifest.json) or a comparison directory (with comparison.json)")
    .option("--out <file>", "where to write the report (default: <dir>/report.html)")
    .option("--audit <file>", "include this audit.json (default: <dir>/audit.json when present)")
    .option("--pressure <file>", "include this pressure.json (default: <dir>/pressure.json when present)")
    .option("--open", "open the report with xdg-open when it is available")
    .option("--json", "print one JSON document")
    .action(
      action(ctx, async (dir: string, opts: ReportCommandOptions) => {
        const { path, opened } = await runReportCommand(ctx.io, dir, opts);
        emit(ctx.io, Boolean(opts.json), { report: path, opened }, () => {
          const color = useColor(ctx.io);
          const note = opts.open && !opened ? "\n(--open: no xdg-open on PATH; open the file in a browser)" : "";
          return `${paint(color, "bold", "report")} ${path}${note}\n`;
        });
      }),
    );
}
