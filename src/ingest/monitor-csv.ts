/**
 * Episode-monitor CSV files as a popular RL library's `Monitor` wrapper writes them:
 *   line 1: `#` then a JSON object (`t_start`, `env_id`, ...)
 *   line 2: header `r,l,t` (episode return, episode length, wall seconds since t_start), then one column
 *           per extra per-episode value (reset/info keywords)
 *   then one row per finished episode.
 * The step axis is the cumulative episode length. Incremental: push bytes as the file grows; a line the
 * writer has not finished (no line break yet) is held back, not parsed. Pure apart from nothing: no I/O.
 */
import { InputError } from "../errors.js";
import { type CsvRecord, parseDelimited, parseNumberCell, Utf8Stream } from "./csv.js";
import { type StepValue, type WindowCheckpoint, windowCheckpoints } from "./windows.js";

export interface Episode {
  /** 0-based episode number in the file. */
  readonly index: number;
  /** Episode return. */
  readonly r: number;
  /** Episode length in steps. */
  readonly l: number;
  /** Wall seconds since `t_start`. */
  readonly t: number;
  /** Cumulative steps at the end of this episode (sum of l so far): the step axis. */
  readonly step: number;
  /** Extra columns by name: a number when the cell reads as one, else the text. */
  readonly extras: Map<string, number | string>;
}

export interface MonitorHeader {
  /** The JSON object of the first line. */
  readonly meta: Record<string, unknown>;
  /** Every column, in file order. */
  readonly columns: string[];
  /** The columns after r, l, t. */
  readonly extraColumns: string[];
}

const REQUIRED = ["r", "l", "t"] as const;

/** True when text looks like a monitor CSV: a `#{` first line and an r,l,t header. */
export function looksLikeMonitorCsv(text: string): boolean {
  if (!text.startsWith("#{")) return false;
  const lines = text.split(/\r?\n/, 3);
  if (lines.length < 2) return false;
  const cols = lines[1].split(",").map((c) => c.trim());
  return REQUIRED.every((c) => cols.includes(c));
}

/** Incremental reader of one monitor CSV. */
export class MonitorCsvReader {
  private readonly utf8 = new Utf8Stream();
  private carry = "";
  private line = 1;
  private cumulative = 0;
  private count = 0;
  private cols: { r: number; l: number; t: number; extras: [number, string][] } | undefined;
  private head: MonitorHeader | undefined;

  constructor(readonly file: string) {}

  get header(): MonitorHeader | undefined {
    return this.head;
  }

  /** Characters held back: an unfinished last line. */
  get pendingChars(): number {
    return this.carry.length;
  }

  /** Episodes completed by these bytes (appended to what came before). */
  push(bytes: Uint8Array | string): Episode[] {
    this.carry += typeof bytes === "string" ? bytes : this.utf8.decode(bytes);
    const out: Episode[] = [];
    if (this.head === undefined && !this.readMetaLine()) return out;
    const chunk = parseDelimited(this.carry, ",", this.line, this.file);
    this.carry = this.carry.slice(chunk.consumed);
    this.line = chunk.nextLine;
    for (const rec of chunk.records) {
      if (rec.fields.length === 1 && rec.fields[0].trim() === "") continue; // blank line
      if (this.cols === undefined) this.readHeader(rec);
      else out.push(this.readRow(rec));
    }
    return out;
  }

  /**
   * Declare the input finished: an InputError when the file never had a whole header. A last line
   * without a line break stays held back (the caller may say so: `pendingChars`).
   */
  finish(): void {
    if (this.head === undefined || this.cols === undefined) {
      const what = this.carry.length === 0 && this.line === 1 ? "the file is empty" : "the file ends before its header line `r,l,t` is complete";
      throw new InputError("ingest.empty", `${what}; a monitor CSV starts with a #{...} JSON line and an r,l,t header`, this.file);
    }
  }

  private readMetaLine(): boolean {
    const nl = this.carry.indexOf("\n");
    if (nl < 0) {
      if (this.carry.length > 0 && !this.carry.startsWith("#")) this.badMeta();
      return false;
    }
    const first = this.carry.slice(0, nl).replace(/\r$/, "");
    if (!first.startsWith("#")) this.badMeta();
    let meta: unknown;
    try {
      meta = JSON.parse(first.slice(1));
    } catch (e) {
      throw new InputError("ingest.monitorHeader", `the first line is not # followed by a JSON object: ${(e as Error).message}`, `${this.file} line 1`);
    }
    if (meta === null || typeof meta !== "object" || Array.isArray(meta)) {
      throw new InputError("ingest.monitorHeader", "the first line must be # followed by a JSON object", `${this.file} line 1`);
    }
    this.head = { meta: meta as Record<string, unknown>, columns: [], extraColumns: [] };
    this.carry = this.carry.slice(nl + 1);
    this.line = 2;
    return true;
  }

  private badMeta(): never {
    throw new InputError("ingest.monitorHeader", "a monitor CSV starts with a line # followed by a JSON object", `${this.file} line 1`);
  }

  private readHeader(rec: CsvRecord): void {
    const columns = rec.fields.map((f) => f.trim());
    const seen = new Set<string>();
    for (const c of columns) {
      if (c === "" || c === "__proto__") throw new InputError("ingest.monitorHeader", `column name ${JSON.stringify(c)} is not allowed`, `${this.file} line ${rec.line}`);
      if (seen.has(c)) throw new InputError("ingest.monitorHeader", `column ${JSON.stringify(c)} appears twice in the header`, `${this.file} line ${rec.line}`);
      seen.add(c);
    }
    const missing = REQUIRED.filter((c) => !seen.has(c));
    if (missing.length > 0) {
      throw new InputError("ingest.monitorHeader", `the header lacks ${missing.join(", ")}; a monitor CSV header starts r,l,t (found: ${columns.join(",")})`, `${this.file} line ${rec.line}`);
    }
    const extras: [number, string][] = [];
    columns.forEach((c, i) => {
      if (!(REQUIRED as readonly string[]).includes(c)) extras.push([i, c]);
    });
    this.cols = { r: columns.indexOf("r"), l: columns.indexOf("l"), t: columns.indexOf("t"), extras };
    this.head = { meta: this.head!.meta, columns, extraColumns: extras.map(([, c]) => c) };
  }

  private readRow(rec: CsvRecord): Episode {
    const cols = this.cols!;
    const where = `${this.file} line ${rec.line}`;
    if (rec.fields.length !== this.head!.columns.length) {
      throw new InputError("ingest.csv", `row has ${rec.fields.length} fields, the header has ${this.head!.columns.length}`, where);
    }
    const num = (i: number, name: string): number => {
      const v = parseNumberCell(rec.fields[i]);
      if (v === undefined || Number.isNaN(v)) throw new InputError("ingest.value", `column ${name} is ${JSON.stringify(rec.fields[i])}, expected a number`, where);
      return v;
    };
    const r = num(cols.r, "r");
    const l = num(cols.l, "l");
    const t = num(cols.t, "t");
    if (!(Number.isInteger(l) && l >= 0)) throw new InputError("ingest.value", `episode length l is ${l}, expected a whole number >= 0`, where);
    const extras = new Map<string, number | string>();
    for (const [i, c] of cols.extras) extras.set(c, parseNumberCell(rec.fields[i]) ?? rec.fields[i]);
    this.cumulative += l;
    return { index: this.count++, r, l, t, step: this.cumulative, extras };
  }
}

/**
 * A whole monitor CSV at once: header, episodes, and the characters of a half-written last line that
 * were held back (0 for a finished file).
 */
export function readMonitorCsv(content: Uint8Array | string, file: string): { header: MonitorHeader; episodes: Episode[]; pendingChars: number } {
  const reader = new MonitorCsvReader(file);
  const episodes = reader.push(content);
  reader.finish();
  return { header: reader.header!, episodes, pendingChars: reader.pendingChars };
}

/**
 * One column of the episodes on the step axis: "r", "l", "t" or an extra column. A text cell, or a
 * column that does not exist, is an InputError.
 */
export function episodeColumn(episodes: readonly Episode[], column: string, file = "monitor CSV"): StepValue[] {
  return episodes.map((e) => {
    let v: number | string | undefined;
    if (column === "r" || column === "l" || column === "t") v = e[column];
    else v = e.extras.get(column);
    if (v === undefined) throw new InputError("ingest.column", `no column ${JSON.stringify(column)}`, file);
    if (typeof v !== "number") throw new InputError("ingest.value", `column ${column} of episode ${e.index} is ${JSON.stringify(v)}, expected a number`, file);
    return { step: e.step, value: v };
  });
}

/** Checkpoints of one column over step windows of `window` steps (see windows.ts for the rule). */
export function episodeCheckpoints(episodes: readonly Episode[], column: string, window: number, level = 0.95, file = "monitor CSV"): WindowCheckpoint[] {
  return windowCheckpoints(episodeColumn(episodes, column, file), window, level);
}
