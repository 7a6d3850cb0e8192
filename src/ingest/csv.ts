/**
 * Delimited text (CSV, TSV) as in RFC 4180 (https://www.rfc-editor.org/rfc/rfc4180, section 2): records
 * end with a line break (CRLF, or a bare LF as most writers emit); a field may be enclosed in double
 * quotes, and then may hold the delimiter, line breaks, and a double quote written twice (""). Pure.
 *
 * Only complete records are returned: text after the last line break outside quotes (a line a writer has
 * not finished) is left unconsumed, so a follower can append the rest and parse again.
 */
import { InputError } from "../errors.js";

export type Delimiter = "," | "\t" | ";";

export interface CsvRecord {
  readonly fields: string[];
  /** 1-based line number where the record starts. */
  readonly line: number;
}

export interface CsvChunk {
  readonly records: CsvRecord[];
  /** Characters of the input consumed (through the last complete record's line break). */
  readonly consumed: number;
  /** Line number of the first unconsumed line. */
  readonly nextLine: number;
}

/**
 * Complete records of `text`. `startLine` is the line number of text's first line (for messages).
 * A quote inside an unquoted field, or text after a closing quote, is an InputError naming the line.
 */
export function parseDelimited(text: string, delimiter: Delimiter, startLine = 1, where = "input"): CsvChunk {
  const records: CsvRecord[] = [];
  let consumed = 0;
  let line = startLine;
  let fields: string[] = [];
  let field = "";
  let recordLine = line;
  let i = 0;
  const n = text.length;
  while (i < n) {
    const c = text[i];
    if (c === '"' && field === "") {
      // quoted field: read to the closing quote
      let j = i + 1;
      let closed = false;
      let value = "";
      let nl = 0;
      while (j < n) {
        const d = text[j];
        if (d === '"') {
          if (text[j + 1] === '"') {
            value += '"';
            j += 2;
            continue;
          }
          closed = true;
          j++;
          break;
        }
        if (d === "\n") nl++;
        value += d;
        j++;
      }
      if (!closed) break; // the record is not complete yet
      const after = text[j];
      if (j < n && after !== delimiter && after !== "\n" && after !== "\r") {
        throw new InputError("ingest.csv", `text after a closing quote in a quoted field (RFC 4180: a quoted field ends at its closing quote)`, `${where} line ${line + nl}`);
      }
      field = value;
      line += nl;
      i = j;
      // mark that this field was quoted so an empty quoted field is not re-opened
      if (j >= n) break;
      continue;
    }
    if (c === delimiter) {
      fields.push(field);
      field = "";
      i++;
      continue;
    }
    if (c === "\r" || c === "\n") {
      const end = c === "\r" && text[i + 1] === "\n" ? i + 2 : c === "\r" && i + 1 >= n ? -1 : i + 1;
      if (end === -1) break; // a lone CR at the very end: wait to see whether an LF follows
      fields.push(field);
      records.push({ fields, line: recordLine });
      fields = [];
      field = "";
      line++;
      recordLine = line;
      i = end;
      consumed = i;
      continue;
    }
    if (c === '"') {
      throw new InputError("ingest.csv", `a double quote inside an unquoted field (RFC 4180: quote the whole field and double the quote)`, `${where} line ${line}`);
    }
    field += c;
    i++;
  }
  return { records, consumed, nextLine: recordLine };
}

/** The delimiter of a header line: the most frequent of tab, comma, semicolon outside quotes (comma on a tie). */
export function detectDelimiter(headerLine: string): Delimiter {
  const counts = new Map<Delimiter, number>([[",", 0], ["\t", 0], [";", 0]]);
  let quoted = false;
  for (const c of headerLine) {
    if (c === '"') quoted = !quoted;
    else if (!quoted && counts.has(c as Delimiter)) counts.set(c as Delimiter, counts.get(c as Delimiter)! + 1);
  }
  let best: Delimiter = ",";
  for (const [d, k] of counts) if (k > counts.get(best)!) best = d;
  return best;
}

/**
 * A number from a text cell: decimal or exponent notation, "nan", "inf", "-inf" (any case, as Python and
 * pandas write them), "True"/"False" as 1/0. Anything else is undefined.
 */
export function parseNumberCell(cell: string): number | undefined {
  const s = cell.trim();
  if (s === "") return undefined;
  if (/^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/.test(s)) return Number(s);
  const low = s.toLowerCase();
  if (low === "nan") return NaN;
  if (low === "inf" || low === "+inf" || low === "infinity") return Infinity;
  if (low === "-inf" || low === "-infinity") return -Infinity;
  if (s === "True" || s === "true") return 1;
  if (s === "False" || s === "false") return 0;
  return undefined;
}

/** Bytes to text across chunk boundaries (a UTF-8 character split between two reads is kept whole). */
export class Utf8Stream {
  private readonly decoder = new TextDecoder("utf-8");
  decode(bytes: Uint8Array): string {
    return this.decoder.decode(bytes, { stream: true });
  }
}
