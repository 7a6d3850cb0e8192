/**
 * `gapwatch report <dir>`: write the HTML report of a run or comparison directory and, when asked,
 * hand it to the desktop's opener (xdg-open) when there is one on PATH.
 */
import { spawn } from "node:child_process";
import { existsSync } from "node:fs";
import { delimiter, join } from "node:path";
import { writeReport } from "../report/write.js";

export interface ReportCommandConfig {
  dir: string;
  out?: string;
  audit?: string;
  pressure?: string;
  /** Open the written file with xdg-open. */
  open?: boolean;
  /** The environment whose PATH is searched for the opener. */
  env?: Record<string, string | undefined>;
}

/** Openers looked for on PATH, in order: the desktop's (xdg-open), then the macOS one (open). */
export const OPENERS = ["xdg-open", "open"] as const;

/** The first opener on PATH (OPENERS), or null. */
export function findOpener(env: Record<string, string | undefined>): string | null {
  for (const name of OPENERS) {
    for (const dir of (env.PATH ?? "").split(delimiter)) {
      if (!dir) continue;
      const p = join(dir, name);
      if (existsSync(p)) return p;
    }
  }
  return null;
}

function openFile(env: Record<string, string | undefined>, file: string): boolean {
  const opener = findOpener(env);
  if (!opener) return false;
  const child = spawn(opener, [file], { detached: true, stdio: "ignore" });
  child.on("error", () => undefined);
  child.unref();
  return true;
}

/** Write (and maybe open) the report; `doc` is what `report --json` prints. */
export async function runReportCommand(cfg: ReportCommandConfig) {
  const path = await writeReport(cfg.dir, { out: cfg.out, audit: cfg.audit, pressure: cfg.pressure });
  const opened = cfg.open ? openFile(cfg.env ?? process.env, path) : false;
  return { path, opened, doc: { report: path, opened } };
}
