/**
 * Which reader a file needs, from its first bytes (not its name): a valid TFRecord header (length and its
 * masked CRC) is an event file; `#{` then an r,l,t header is an episode-monitor CSV; a first non-blank
 * character `{` is JSON lines; anything else with a delimiter in its first line is CSV/TSV. Pure.
 */
import { InputError } from "../errors.js";
import { detectDelimiter } from "./csv.js";
import { looksLikeMonitorCsv } from "./monitor-csv.js";
import { looksLikeTfRecord, RECORD_HEADER_BYTES } from "./tfrecord.js";

export const INGEST_FORMATS = ["tfevents", "monitor-csv", "csv", "jsonl"] as const;
export type IngestFormat = (typeof INGEST_FORMATS)[number];

/** Bytes of a file's head that detection needs at most. */
export const DETECT_BYTES = 64 * 1024;

/** Parse a forced format name (e.g. from a flag); an unknown name is an InputError listing the known ones. */
export function parseFormat(name: string, where = "format"): IngestFormat {
  if ((INGEST_FORMATS as readonly string[]).includes(name)) return name as IngestFormat;
  throw new InputError("ingest.format", `unknown format ${JSON.stringify(name)}; known: ${INGEST_FORMATS.join(", ")}`, where);
}

/**
 * The format of a file from its head (up to DETECT_BYTES). `fileName` only breaks the tie for an event
 * file too short to hold one record header yet (a writer just opened it).
 */
export function detectFormat(head: Uint8Array, file: string, fileName = file): IngestFormat {
  if (head.length === 0) throw new InputError("ingest.empty", "the file is empty; nothing to read", file);
  if (looksLikeTfRecord(head)) return "tfevents";
  if (head.length < RECORD_HEADER_BYTES && fileName.includes("tfevents")) return "tfevents";
  const text = new TextDecoder("utf-8").decode(head.subarray(0, Math.min(head.length, DETECT_BYTES)));
  if (text.startsWith("#{")) {
    if (looksLikeMonitorCsv(text)) return "monitor-csv";
    if (!text.includes("\n") || text.split(/\r?\n/).length < 3) {
      throw new InputError("ingest.truncated", "the file starts like an episode-monitor CSV (#{...}) but its r,l,t header line is not complete", file);
    }
  }
  const first = text.trimStart();
  if (first.startsWith("{")) return "jsonl";
  const nl = text.indexOf("\n");
  const headerLine = nl < 0 ? text : text.slice(0, nl);
  if (/[\u0000-\u0008\u000e-\u001f]/.test(headerLine)) {
    throw new InputError("ingest.format", "binary content that is not an event file (its first bytes are not a valid TFRecord header: damaged or another format)", `${file} byte 0`);
  }
  const delim = detectDelimiter(headerLine);
  if (headerLine.includes(delim)) return "csv";
  throw new InputError("ingest.format", `cannot tell the format: not an event file, not a monitor CSV, not JSON lines, and the first line has no comma or tab; force one of ${INGEST_FORMATS.join(", ")}`, `${file} line 1`);
}
