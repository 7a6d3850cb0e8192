/**
 * Event files (TFRecord of serialized `Event`s) to scalar points. Pure: bytes in, points out, with the
 * byte offset to resume from so a follower reads only what a writer appended since.
 */
import { InputError } from "../errors.js";
import { WireError } from "./protobuf.js";
import { decodeEvent, eventScalars, type ScalarPoint } from "./tf-event.js";
import { isFramingError, readRecords } from "./tfrecord.js";

export interface EventBytesResult {
  readonly points: ScalarPoint[];
  /** Absolute byte offset after the last whole record: where the next read starts. */
  readonly offset: number;
  /** Bytes after `offset` that form a record not yet fully written (0 when the file ends on a boundary). */
  readonly pendingBytes: number;
  /** Wall time of the first event in these bytes, if any whole record was read. */
  readonly firstWallTime?: number;
  /** Number of events (records) decoded. */
  readonly events: number;
}

/**
 * Decode the records in `buf`, whose first byte is byte `base` of the file `file` (named in errors).
 * A half-written last record is left for later (`pendingBytes`); a bad CRC or a malformed event is an
 * `InputError` ("ingest.crc", "ingest.length", "ingest.event") naming the file and the record's byte offset.
 */
export function decodeEventBytes(buf: Uint8Array, base: number, file: string): EventBytesResult {
  const framed = readRecords(buf);
  if (isFramingError(framed.status)) {
    const e = framed.status;
    throw new InputError(e.code, `${e.message.replace(/^record at byte \d+/, `record at byte ${base + e.offset}`)}`, `${file} byte ${base + e.offset}`);
  }
  const points: ScalarPoint[] = [];
  let firstWallTime: number | undefined;
  for (let i = 0; i < framed.records.length; i++) {
    let event;
    try {
      event = decodeEvent(framed.records[i]);
    } catch (err) {
      if (!(err instanceof WireError)) throw err;
      const at = base + framed.recordOffsets[i];
      throw new InputError("ingest.event", `record at byte ${at} is not a valid Event message: ${err.message} (byte ${err.offset} of the record data)`, `${file} byte ${at}`);
    }
    if (firstWallTime === undefined) firstWallTime = event.wallTime;
    for (const p of eventScalars(event)) points.push(p);
  }
  return {
    points,
    offset: base + framed.offset,
    pendingBytes: buf.length - framed.offset,
    firstWallTime,
    events: framed.records.length,
  };
}

/** Points grouped by tag, each series in reading order. Tags are data: a Map, never an object. */
export function pointsByTag(points: readonly ScalarPoint[]): Map<string, ScalarPoint[]> {
  const out = new Map<string, ScalarPoint[]>();
  for (const p of points) {
    const list = out.get(p.tag);
    if (list === undefined) out.set(p.tag, [p]);
    else list.push(p);
  }
  return out;
}
