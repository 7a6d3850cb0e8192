/**
 * The files `audit` and `pressure` write on request: `<run-dir>/<audit|pressure>.json` for
 * `gapwatch report`, and a standalone HTML report with its JSON document beside it (same name, `.json`).
 */
import { join, resolve } from "node:path";
import { dirKind } from "../report/data.js";
import { jsonBeside, standaloneFileName } from "../report/standalone.js";
import { writeReportFile } from "../report/write.js";
import { writeJsonAtomic } from "../store/atomic.js";

export interface DocumentOutputOptions {
  /** A standalone HTML report: true for `<runsDir>/<kind>-<env>-<reward>.html`, or a file. */
  report?: boolean | string;
  /** Where the default report goes (default ./runs). */
  runsDir?: string;
  /** An existing run or comparison directory to drop the JSON document into. */
  runDir?: string;
}

export interface WrittenOutputs {
  report: string | null;
  documents: string[];
}

/** The checked `runDir` (a run or comparison directory), before any work is done; null when not given. */
export function checkRunDir(runDir: string | undefined): string | null {
  if (runDir === undefined) return null;
  const dir = resolve(runDir);
  dirKind(dir);
  return dir;
}

/** Write what `opts` asks for: the document into the run directory, then the HTML report and its JSON. */
export async function writeDocumentOutputs(
  opts: DocumentOutputOptions,
  what: { kind: "audit" | "pressure"; file: string; env: string; reward: string; doc: unknown; render: () => Promise<string> },
): Promise<WrittenOutputs> {
  const documents: string[] = [];
  const runDir = checkRunDir(opts.runDir);
  if (runDir) {
    const file = join(runDir, what.file);
    writeJsonAtomic(file, what.doc);
    documents.push(file);
  }
  let report: string | null = null;
  if (opts.report) {
    const out = typeof opts.report === "string" ? resolve(opts.report) : join(resolve(opts.runsDir ?? "runs"), standaloneFileName(what.kind, what.env, what.reward));
    report = writeReportFile(out, await what.render());
    const json = jsonBeside(report);
    writeJsonAtomic(json, what.doc);
    documents.push(json);
  }
  return { report, documents };
}

/** The keys the written files add to a command's JSON document (none when nothing was written). */
export function outputsDoc(w: WrittenOutputs): { report?: string; documents?: string[] } {
  return w.report || w.documents.length ? { ...(w.report ? { report: w.report } : {}), documents: w.documents } : {};
}
