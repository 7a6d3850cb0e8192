/**
 * Atomic file writes: write a temporary file in the same directory, then rename it over the target.
 * On POSIX file systems the rename is atomic, so a reader (or a run killed half-way) sees either the
 * old file or the new one, never a torn one. The temporary name carries the process id and a counter
 * so concurrent writers in one directory do not collide.
 */
import { appendFileSync, closeSync, fsyncSync, openSync, renameSync, rmSync, writeSync } from "node:fs";
import { basename, dirname, join } from "node:path";
import { GapwatchError } from "../errors.js";

let counter = 0;

/** Write `data` to `file` atomically (temp file in the same directory + fsync + rename). */
export function writeFileAtomic(file: string, data: string): void {
  const tmp = join(dirname(file), `.${basename(file)}.${process.pid}.${counter++}.tmp`);
  let fd: number | undefined;
  try {
    fd = openSync(tmp, "w");
    writeSync(fd, data);
    fsyncSync(fd);
    closeSync(fd);
    fd = undefined;
    renameSync(tmp, file);
  } catch (err) {
    if (fd !== undefined) closeSync(fd);
    rmSync(tmp, { force: true });
    throw new GapwatchError("store.write", `cannot write ${file}: ${(err as Error).message}`, { where: file, cause: err });
  }
}

/** Write a JSON document atomically, two-space indented, with a final newline. */
export function writeJsonAtomic(file: string, doc: unknown): void {
  writeFileAtomic(file, JSON.stringify(doc, null, 2) + "\n");
}

/**
 * Append one line to a JSON-lines file. Lines are appended whole with one write call (O_APPEND), so
 * an interrupted run leaves every complete line it wrote; a reader skips a torn last line.
 */
export function appendJsonLine(file: string, doc: unknown): void {
  try {
    appendFileSync(file, JSON.stringify(doc) + "\n");
  } catch (err) {
    throw new GapwatchError("store.write", `cannot append to ${file}: ${(err as Error).message}`, { where: file, cause: err });
  }
}
