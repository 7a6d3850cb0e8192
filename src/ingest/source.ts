/**
 * One input path of `gapwatch ingest` as named series, read incrementally (the I/O edge of this folder).
 * A folder is read as event files (runs by subfolder); a file's format is detected from its first bytes
 * unless forced. Each `poll()` reads only what was appended since the previous one and returns every
 * series so far, per run.
 */
import { statSync } from "node:fs";
import { readBytesFrom } from "./read-bytes.js";
import { InputError } from "../errors.js";
import { DETECT_BYTES, detectFormat, type IngestFormat } from "./detect.js";
import { EventFolderReader } from "./event-folder.js";
import { MonitorCsvReader, type Episode } from "./monitor-csv.js";
import { seriesFromPoints, type Series } from "./series.js";
import { looksLikeTfRecord, RECORD_HEADER_BYTES } from "./tfrecord.js";
import { DelimitedReader, JsonLinesReader, type TableOptions } from "./table.js";

export interface SourceOptions extends TableOptions {
  /** Skip detection. */
  readonly format?: IngestFormat;
}

export interface SourceSnapshot {
  /** Undefined while a growing file is too short to tell its format (poll only; finish decides). */
  readonly format: IngestFormat | undefined;
  /** Series per run key ("." for a single file or the root folder's own files). */
  readonly runs: Map<string, Map<string, Series>>;
  /**
   * True when each value is one episode (monitor CSV; step = cumulative steps at its end), to be pooled
   * into checkpoints (windows.ts / checkpoints.ts) rather than read as checkpoints.
   */
  readonly perEpisode: boolean;
  /** Files whose last record or line is not finished yet, with the bytes or characters waiting. */
  readonly pending: { path: string; bytes: number }[];
}

/** Monitor-CSV episodes as series on the cumulative-step axis: r, l, t and every numeric extra column. */
export function episodeSeries(episodes: readonly Episode[], into = new Map<string, Series>()): Map<string, Series> {
  const push = (name: string, step: number, value: number): void => {
    let s = into.get(name);
    if (s === undefined) {
      s = { name, steps: [], values: [] };
      into.set(name, s);
    }
    s.steps.push(step);
    s.values.push(value);
  };
  for (const e of episodes) {
    push("r", e.step, e.r);
    push("l", e.step, e.l);
    push("t", e.step, e.t);
    for (const [k, v] of e.extras) if (typeof v === "number") push(k, e.step, v);
  }
  return into;
}

/**
 * Whether a file head is long enough to tell its format: a whole TFRecord header, binary bytes in the
 * first 12 (detection will then refuse them), or a whole first line (two for a `#` monitor header).
 */
function formatDecidable(head: Uint8Array): boolean {
  if (head.length >= RECORD_HEADER_BYTES) {
    if (looksLikeTfRecord(head)) return true;
    if (head.subarray(0, RECORD_HEADER_BYTES).some((b) => b < 0x09 || (b > 0x0d && b < 0x20))) return true;
  }
  let lines = 0;
  for (const b of head) if (b === 0x0a) lines++;
  return lines >= (head[0] === 0x23 ? 2 : 1);
}

type FileReader = { kind: "monitor-csv"; r: MonitorCsvReader; series: Map<string, Series> } | { kind: "csv"; r: DelimitedReader } | { kind: "jsonl"; r: JsonLinesReader };

export class IngestSource {
  private format: IngestFormat | undefined;
  private events: EventFolderReader | undefined;
  private file: FileReader | undefined;
  private offset = 0;

  constructor(readonly path: string, private readonly opts: SourceOptions = {}) {}

  /**
   * Read what is new and return every series so far. A file too short to tell its format yet (empty,
   * or no whole first line) is waited for: the snapshot has no format and no series.
   */
  poll(): SourceSnapshot {
    return this.read(false);
  }

  private read(final: boolean): SourceSnapshot {
    const st = statSync(this.path);
    if (this.format === undefined) {
      if (st.isDirectory()) {
        if (this.opts.format !== undefined && this.opts.format !== "tfevents") {
          throw new InputError("ingest.format", `a folder is read as event files; format ${this.opts.format} needs a file`, this.path);
        }
        this.format = "tfevents";
      } else if (this.opts.format !== undefined) this.format = this.opts.format;
      else {
        const head = readBytesFrom(this.path, 0, DETECT_BYTES);
        if (!final && !formatDecidable(head)) return { format: undefined, runs: new Map(), perEpisode: false, pending: head.length > 0 ? [{ path: this.path, bytes: head.length }] : [] };
        this.format = detectFormat(head, this.path);
      }
    }
    if (this.format === "tfevents") return this.pollEvents();
    return this.pollFile();
  }

  private pollEvents(): SourceSnapshot {
    this.events ??= new EventFolderReader(this.path);
    const { pending } = this.events.poll();
    const runs = new Map(this.events.runs().map((r) => [r.run, seriesFromPoints(r.points)]));
    return { format: "tfevents", runs, perEpisode: false, pending };
  }

  private pollFile(): SourceSnapshot {
    const format = this.format!;
    if (this.file === undefined) {
      if (format === "monitor-csv") this.file = { kind: format, r: new MonitorCsvReader(this.path), series: new Map() };
      else if (format === "csv") this.file = { kind: format, r: new DelimitedReader(this.path, this.opts) };
      else this.file = { kind: "jsonl", r: new JsonLinesReader(this.path, this.opts) };
    }
    const bytes = readBytesFrom(this.path, this.offset);
    this.offset += bytes.length;
    const f = this.file;
    let series: Map<string, Series>;
    if (f.kind === "monitor-csv") {
      episodeSeries(f.r.push(bytes), f.series);
      series = f.series;
    } else {
      f.r.push(bytes);
      series = f.r.result().series;
    }
    const waiting = f.r.pendingChars;
    return { format, runs: new Map([[".", series]]), perEpisode: f.kind === "monitor-csv", pending: waiting > 0 ? [{ path: this.path, bytes: waiting }] : [] };
  }

  /**
   * Declare the input finished (no --follow): an empty file or one without a whole header is an
   * InputError; a JSON-lines last line without a line break counts when it is a whole object.
   */
  finish(): SourceSnapshot {
    const snap = this.read(true);
    const f = this.file;
    if (f === undefined) return snap;
    if (f.kind === "monitor-csv") {
      f.r.finish();
      return snap;
    }
    f.r.result(true);
    return this.poll();
  }
}
