/**
 * Writing a report file: read a run or comparison directory (and audit.json / pressure.json beside
 * it or given), load the environment when there is something to draw on its map, render, and write
 * the HTML atomically. `<dir>/report.html` by default.
 */
import { existsSync, mkdirSync, readFileSync } from "node:fs";
import { dirname, join, resolve } from "node:path";
import { InputError } from "../errors.js";
import { parseRewardFile } from "../model/format/reward-file.js";
import { loadFinite } from "../env/resolve.js";
import type { FiniteModel } from "../model/types.js";
import { writeFileAtomic } from "../store/atomic.js";
import { renderComparisonReport } from "./comparison-report.js";
import { dirKind, loadComparisonReport, loadRunReport, type AuditDoc, type PressureDoc } from "./data.js";
import { renderRunReport } from "./run-report.js";

export const REPORT_FILE = "report.html";

export interface WriteReportOptions {
  /** Output file (default `<dir>/report.html`). */
  out?: string;
  /** An audit document or the path of audit.json to include (default: `<dir>/audit.json` if present; null: none). */
  audit?: string | AuditDoc | null;
  /** A pressure document or the path of pressure.json (default: `<dir>/pressure.json` if present; null: none). */
  pressure?: string | PressureDoc | null;
  /** The environment's model, for drawings (default: loaded from the run's config when needed; null: no drawings). */
  model?: FiniteModel | null;
  /** Fixed time stamp for the footer (default: now). */
  generatedAt?: string;
}

/** The environment of a run, or null when it cannot be loaded here (moved file, no finite model). */
async function tryModel(spec: string | undefined): Promise<FiniteModel | null> {
  if (!spec) return null;
  try {
    return (await loadFinite(spec, { command: "report" })).model;
  } catch {
    return null;
  }
}

/** The `name` inside a reward file named by a run's config, or null (a built-in variant, or the file is gone). */
export function rewardFileName(spec: string): string | null {
  if (!/\.json$/i.test(spec) || !existsSync(spec)) return null;
  try {
    return parseRewardFile(readFileSync(spec, "utf8"), spec).name;
  } catch {
    return null;
  }
}

/** Render the report of `dir` to HTML (no file written). */
export async function renderReportFor(dir: string, opts: WriteReportOptions = {}): Promise<string> {
  const kind = dirKind(dir);
  const generatedAt = opts.generatedAt;
  if (kind === "run") {
    const data = loadRunReport(dir, opts);
    const needModel = Boolean(data.policy || data.audit);
    const model = opts.model !== undefined ? opts.model : needModel ? await tryModel(data.run.config.env ?? data.audit?.env) : null;
    return renderRunReport({ ...data, model, generatedAt, rewardName: rewardFileName(data.run.config.reward) });
  }
  const data = loadComparisonReport(dir, opts);
  const model = opts.model !== undefined ? opts.model : data.audit ? await tryModel(data.audit.env ?? data.comparison.env ?? data.runs[0]?.config.env) : null;
  return renderComparisonReport({ ...data, model, generatedAt });
}

/** Write the report of a run or comparison directory; resolves to the written file's absolute path. */
export async function writeReport(dir: string, opts: WriteReportOptions = {}): Promise<string> {
  const html = await renderReportFor(dir, opts);
  return writeReportFile(opts.out ?? join(dir, REPORT_FILE), html);
}

/** Write an already-rendered report (a standalone audit or pressure page) to `out`, creating its folder; resolves to the absolute path. */
export function writeReportFile(out: string, html: string): string {
  const file = resolve(out);
  try {
    mkdirSync(dirname(file), { recursive: true });
    writeFileAtomic(file, html);
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    // A path the user gave that is no folder (or not writable) is their input, not an internal failure.
    if (code === "EEXIST" || code === "ENOTDIR" || code === "EISDIR" || code === "EACCES" || code === "EROFS") {
      throw new InputError("input.output", `cannot write the report to ${file} (${code}); check --report and --runs-dir (a folder is needed where a file is)`, dirname(file));
    }
    throw e;
  }
  return file;
}
