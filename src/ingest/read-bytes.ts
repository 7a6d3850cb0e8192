/** The one file-reading primitive of src/ingest: bytes of a file from an offset (for incremental reads). */
import { closeSync, openSync, readSync, statSync } from "node:fs";
import { InputError } from "../errors.js";

/** Up to `max` bytes of `path` from byte `offset` to its current end. A file shorter than `offset` is an InputError. */
export function readBytesFrom(path: string, offset: number, max = Infinity): Uint8Array {
  const size = statSync(path).size;
  if (size < offset) throw new InputError("ingest.truncated", `the file shrank from ${offset} to ${size} bytes while being read (was it rewritten?)`, path);
  const want = Math.min(size - offset, max);
  const buf = Buffer.alloc(want);
  const fd = openSync(path, "r");
  try {
    let got = 0;
    while (got < want) {
      const n = readSync(fd, buf, got, want - got, offset + got);
      if (n === 0) break;
      got += n;
    }
    return buf.subarray(0, got);
  } finally {
    closeSync(fd);
  }
}
