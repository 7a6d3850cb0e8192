/**
 * Tables of logged values, CSV/TSV (delimiter detected from the header) and JSON lines (one object per
 * line), as named numeric series over a step column. Incremental: push bytes as the file grows; an
 * unfinished last line is held back.
 *
 * Step column: option `step`, else the first present of `step`, `global_step`, `_step`, `timesteps`.
 * Values: numbers (and, in CSV, "nan"/"inf"/"True"/"False" as Python writes them; in JSON lines, numbers,
 * booleans and numeric strings; Python's bare NaN/Infinity tokens are accepted). An empty cell or a
 * null is a gap (no point). A column whose first value is text is a text column and not a series; a text
 * value in a numeric column is an InputError naming the file, line and column.
 */
import { InputError } from "../errors.js";
import { type Delimiter, detectDelimiter, parseDelimited, parseNumberCell, Utf8Stream } from "./csv.js";
import { listNames, type Series } from "./series.js";

export const STEP_COLUMNS = ["step", "global_step", "_step", "timesteps"] as const;

export interface TableOptions {
  /** Name of the step column (default: the first of STEP_COLUMNS present). */
  readonly step?: string;
}

export interface TableSeries {
  readonly stepColumn: string;
  /** One series per numeric column other than the step column, in first-seen column order. */
  readonly series: Map<string, Series>;
  /** Columns that hold text (or nested JSON), not series. */
  readonly textColumns: string[];
  /** Rows (lines) read. */
  readonly rows: number;
}

type Cell = number | string | null | undefined | "nested";

/** Accumulates rows into series; shared by the CSV and JSON-lines readers. */
class SeriesBuilder {
  private stepColumn: string | undefined;
  private readonly series = new Map<string, Series>();
  private readonly text = new Set<string>();
  private rows = 0;

  constructor(private readonly file: string, private readonly opts: TableOptions) {}

  chooseStep(columns: readonly string[], line: number): void {
    if (this.stepColumn !== undefined) return;
    const want = this.opts.step;
    const found = want !== undefined ? (columns.includes(want) ? want : undefined) : STEP_COLUMNS.find((c) => columns.includes(c));
    if (found === undefined) {
      const asked = want !== undefined ? `no step column ${JSON.stringify(want)}` : `no step column (looked for ${STEP_COLUMNS.join(", ")})`;
      throw new InputError("ingest.step", `${asked}; name one with the step option; the columns are: ${listNames(columns)}`, `${this.file} line ${line}`);
    }
    this.stepColumn = found;
  }

  add(cells: ReadonlyMap<string, Cell>, line: number): void {
    const where = `${this.file} line ${line}`;
    const stepCell = cells.get(this.stepColumn!);
    if (typeof stepCell !== "number" || !Number.isFinite(stepCell)) {
      throw new InputError("ingest.value", `step column ${JSON.stringify(this.stepColumn)} is ${JSON.stringify(stepCell ?? null)}, expected a finite number`, where);
    }
    this.rows++;
    for (const [name, cell] of cells) {
      if (name === this.stepColumn || cell === null || cell === undefined || this.text.has(name)) continue;
      let s = this.series.get(name);
      if (typeof cell !== "number") {
        if (s === undefined) {
          this.text.add(name);
          continue;
        }
        throw new InputError("ingest.value", `column ${JSON.stringify(name)} is ${cell === "nested" ? "a nested value" : JSON.stringify(cell)}, expected a number like its earlier rows`, where);
      }
      if (s === undefined) {
        s = { name, steps: [], values: [] };
        this.series.set(name, s);
      }
      s.steps.push(stepCell);
      s.values.push(cell);
    }
  }

  result(): TableSeries {
    return { stepColumn: this.stepColumn ?? "", series: this.series, textColumns: [...this.text], rows: this.rows };
  }
}

function checkName(name: string, file: string, line: number): void {
  if (name === "__proto__") throw new InputError("ingest.column", `column name "__proto__" is not allowed`, `${file} line ${line}`);
}

/** Incremental CSV/TSV reader: header line, then rows. */
export class DelimitedReader {
  private readonly utf8 = new Utf8Stream();
  private readonly builder: SeriesBuilder;
  private carry = "";
  private line = 1;
  private delimiter: Delimiter | undefined;
  private columns: string[] | undefined;

  constructor(readonly file: string, opts: TableOptions & { delimiter?: Delimiter } = {}) {
    this.builder = new SeriesBuilder(file, opts);
    this.delimiter = opts.delimiter;
  }

  get pendingChars(): number {
    return this.carry.length;
  }

  /** Rows completed by these bytes. */
  push(bytes: Uint8Array | string): number {
    this.carry += typeof bytes === "string" ? bytes : this.utf8.decode(bytes);
    if (this.delimiter === undefined) {
      const nl = this.carry.indexOf("\n");
      if (nl < 0) return 0;
      this.delimiter = detectDelimiter(this.carry.slice(0, nl));
    }
    const chunk = parseDelimited(this.carry, this.delimiter, this.line, this.file);
    this.carry = this.carry.slice(chunk.consumed);
    this.line = chunk.nextLine;
    let added = 0;
    for (const rec of chunk.records) {
      if (rec.fields.length === 1 && rec.fields[0].trim() === "") continue;
      if (this.columns === undefined) {
        this.columns = rec.fields.map((f) => f.trim());
        const seen = new Set<string>();
        for (const c of this.columns) {
          checkName(c, this.file, rec.line);
          if (seen.has(c)) throw new InputError("ingest.column", `column ${JSON.stringify(c)} appears twice in the header`, `${this.file} line ${rec.line}`);
          seen.add(c);
        }
        this.builder.chooseStep(this.columns, rec.line);
        continue;
      }
      if (rec.fields.length !== this.columns.length) {
        throw new InputError("ingest.csv", `row has ${rec.fields.length} fields, the header has ${this.columns.length}`, `${this.file} line ${rec.line}`);
      }
      const cells = new Map<string, Cell>();
      this.columns.forEach((c, i) => {
        const raw = rec.fields[i];
        cells.set(c, raw.trim() === "" ? undefined : (parseNumberCell(raw) ?? raw));
      });
      this.builder.add(cells, rec.line);
      added++;
    }
    return added;
  }

  /**
   * The series so far; with `final`, an empty or header-less input is an InputError. A last line without
   * a line break is held back even then (`pendingChars`): a cut-off number would read as a wrong value.
   */
  result(final = false): TableSeries {
    if (final && this.columns === undefined) {
      throw new InputError("ingest.empty", this.carry.trim() === "" ? "the file is empty" : "the file ends inside its header line", this.file);
    }
    return this.builder.result();
  }
}

/** Python's json module writes NaN, Infinity and -Infinity bare; turn them into strings outside strings. */
function quoteNonFinite(line: string): string {
  let out = "";
  let inString = false;
  for (let i = 0; i < line.length; i++) {
    const c = line[i];
    if (inString) {
      out += c;
      if (c === "\\") out += line[++i] ?? "";
      else if (c === '"') inString = false;
      continue;
    }
    if (c === '"') inString = true;
    const rest = line.startsWith("-Infinity", i) ? "-Infinity" : line.startsWith("Infinity", i) ? "Infinity" : line.startsWith("NaN", i) ? "NaN" : "";
    if (rest !== "") {
      out += `"${rest}"`;
      i += rest.length - 1;
      continue;
    }
    out += c;
  }
  return out;
}

function jsonCell(v: unknown): Cell {
  if (v === null || v === undefined) return null;
  if (typeof v === "number") return v;
  if (typeof v === "boolean") return v ? 1 : 0;
  if (typeof v === "string") return parseNumberCell(v) ?? v;
  return "nested";
}

/** Incremental JSON-lines reader: one object per line. */
export class JsonLinesReader {
  private readonly utf8 = new Utf8Stream();
  private readonly builder: SeriesBuilder;
  private carry = "";
  private line = 1;
  private seenAny = false;

  constructor(readonly file: string, opts: TableOptions = {}) {
    this.builder = new SeriesBuilder(file, opts);
  }

  get pendingChars(): number {
    return this.carry.length;
  }

  push(bytes: Uint8Array | string): number {
    this.carry += typeof bytes === "string" ? bytes : this.utf8.decode(bytes);
    let added = 0;
    let nl: number;
    while ((nl = this.carry.indexOf("\n")) >= 0) {
      const text = this.carry.slice(0, nl).replace(/\r$/, "");
      this.carry = this.carry.slice(nl + 1);
      const line = this.line++;
      if (text.trim() === "") continue;
      let obj: unknown;
      try {
        obj = JSON.parse(text);
      } catch {
        try {
          obj = JSON.parse(quoteNonFinite(text));
        } catch (e) {
          throw new InputError("ingest.json", `not a JSON object: ${(e as Error).message}`, `${this.file} line ${line}`);
        }
      }
      if (obj === null || typeof obj !== "object" || Array.isArray(obj)) {
        throw new InputError("ingest.json", "each line must be one JSON object", `${this.file} line ${line}`);
      }
      const keys = Object.keys(obj);
      const cells = new Map<string, Cell>();
      for (const k of keys) {
        checkName(k, this.file, line);
        cells.set(k, jsonCell((obj as Record<string, unknown>)[k]));
      }
      this.builder.chooseStep(keys, line);
      this.builder.add(cells, line);
      this.seenAny = true;
      added++;
    }
    return added;
  }

  /**
   * The series so far. With `final` (the file is finished) a last line without a line break still
   * counts when it is a whole JSON object (a cut-off object cannot parse, so nothing half-written is
   * read); an input with no line at all is an InputError.
   */
  result(final = false): TableSeries {
    if (final && this.carry.trim() !== "") {
      let whole = false;
      try {
        const v: unknown = JSON.parse(quoteNonFinite(this.carry));
        whole = v !== null && typeof v === "object";
      } catch {
        whole = false;
      }
      if (whole) this.push("\n");
    }
    if (final && !this.seenAny) throw new InputError("ingest.empty", this.carry.trim() === "" ? "the file has no JSON lines" : "the only line has no line break (a truncated file)", this.file);
    return this.builder.result();
  }
}

/** A whole CSV/TSV at once. */
export function readDelimitedSeries(content: Uint8Array | string, file: string, opts: TableOptions & { delimiter?: Delimiter } = {}): TableSeries {
  const r = new DelimitedReader(file, opts);
  r.push(content);
  return r.result(true);
}

/** A whole JSON-lines file at once. */
export function readJsonLinesSeries(content: Uint8Array | string, file: string, opts: TableOptions = {}): TableSeries {
  const r = new JsonLinesReader(file, opts);
  r.push(content);
  return r.result(true);
}
