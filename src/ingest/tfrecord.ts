/**
 * TFRecord framing (tensorflow/core/lib/io/record_writer.cc): every record is
 *   uint64 length (little-endian) | uint32 masked CRC-32C of those 8 bytes | data[length] |
 *   uint32 masked CRC-32C of data
 * Pure: reads a byte buffer from an offset and says where it stopped and why. A record whose bytes are
 * not all there yet (a writer mid-flush) is `partial`, not an error: the caller keeps the offset and
 * reads again when the file has grown.
 */
import { maskedCrc32c } from "./crc32c.js";

/** Bytes before the data (length + its CRC) and after it (data CRC). */
export const RECORD_HEADER_BYTES = 12;
export const RECORD_FOOTER_BYTES = 4;

/** A record that cannot be read: bad CRC of the length or of the data, or an impossible length. */
export interface FramingError {
  readonly code: "ingest.crc" | "ingest.length";
  /** Byte offset of the start of the bad record. */
  readonly offset: number;
  readonly message: string;
}

export type FramingStatus = "complete" | "partial" | FramingError;

export interface FramingResult {
  /** The data of each whole record read, in order (views into the input buffer). */
  readonly records: Uint8Array[];
  /** Byte offset of the start of each record in `records`. */
  readonly recordOffsets: number[];
  /** Where reading stopped: after the last whole record (the start of the partial or bad one). */
  readonly offset: number;
  readonly status: FramingStatus;
}

export function isFramingError(s: FramingStatus): s is FramingError {
  return typeof s === "object";
}

function u32(buf: Uint8Array, at: number): number {
  return (buf[at] | (buf[at + 1] << 8) | (buf[at + 2] << 16) | (buf[at + 3] << 24)) >>> 0;
}

/**
 * Whole records of `buf` from `offset` on. Stops at the end of the buffer (`complete` when it ends on a
 * record boundary, `partial` inside a record) or at the first bad record (a `FramingError`).
 */
export function readRecords(buf: Uint8Array, offset = 0): FramingResult {
  const records: Uint8Array[] = [];
  const recordOffsets: number[] = [];
  let at = offset;
  const done = (status: FramingStatus): FramingResult => ({ records, recordOffsets, offset: at, status });
  while (at < buf.length) {
    if (buf.length - at < RECORD_HEADER_BYTES) return done("partial");
    if (maskedCrc32c(buf, at, at + 8) !== u32(buf, at + 8)) {
      return done({ code: "ingest.crc", offset: at, message: `record at byte ${at}: the CRC of its length field does not match (file damaged or not a TFRecord file)` });
    }
    const length = u32(buf, at) + u32(buf, at + 4) * 2 ** 32;
    if (!Number.isSafeInteger(length)) {
      return done({ code: "ingest.length", offset: at, message: `record at byte ${at}: length ${length} is too large to be real` });
    }
    const end = at + RECORD_HEADER_BYTES + length + RECORD_FOOTER_BYTES;
    if (end > buf.length) return done("partial");
    const dataStart = at + RECORD_HEADER_BYTES;
    if (maskedCrc32c(buf, dataStart, dataStart + length) !== u32(buf, dataStart + length)) {
      return done({ code: "ingest.crc", offset: at, message: `record at byte ${at}: the CRC of its ${length} data bytes does not match (file damaged)` });
    }
    records.push(buf.subarray(dataStart, dataStart + length));
    recordOffsets.push(at);
    at = end;
  }
  return done("complete");
}

/** True when `buf` starts with a whole, valid record header (length and its CRC): a TFRecord file. */
export function looksLikeTfRecord(buf: Uint8Array): boolean {
  return buf.length >= RECORD_HEADER_BYTES && maskedCrc32c(buf, 0, 8) === u32(buf, 8);
}

/** One framed record around `data` (the writer side, for tests and tools that write event files). */
export function frameRecord(data: Uint8Array): Uint8Array {
  const out = new Uint8Array(RECORD_HEADER_BYTES + data.length + RECORD_FOOTER_BYTES);
  const view = new DataView(out.buffer);
  view.setUint32(0, data.length % 2 ** 32, true);
  view.setUint32(4, Math.floor(data.length / 2 ** 32), true);
  view.setUint32(8, maskedCrc32c(out, 0, 8), true);
  out.set(data, RECORD_HEADER_BYTES);
  view.setUint32(RECORD_HEADER_BYTES + data.length, maskedCrc32c(data), true);
  return out;
}
