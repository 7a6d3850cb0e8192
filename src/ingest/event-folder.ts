/**
 * The thin I/O layer over event files: find every event file under a folder (names containing
 * "tfevents"), group them into runs by folder (run key = the folder's path relative to the root, "."
 * for the root itself), order each run's files oldest first by the wall time of their first event, and
 * read incrementally: each `poll()` reads only the bytes appended since the last one, leaving a
 * half-written record for the next poll (for `--follow`).
 */
import { readdirSync, statSync } from "node:fs";
import { readBytesFrom } from "./read-bytes.js";
import { basename, join, relative, sep } from "node:path";
import { decodeEventBytes } from "./event-file.js";
import type { ScalarPoint } from "./tf-event.js";

export interface EventFileRef {
  /** Run key: folder relative to the root, with "/" separators; "." for files directly in the root. */
  readonly run: string;
  readonly path: string;
}

/** True for a file name an event writer would use. */
export function isEventFileName(name: string): boolean {
  return name.includes("tfevents");
}

/** Every event file under `root` (a folder, or one event file), sorted by run key then path. */
export function listEventFiles(root: string): EventFileRef[] {
  const st = statSync(root);
  if (st.isFile()) return [{ run: ".", path: root }];
  const out: EventFileRef[] = [];
  const walk = (dir: string): void => {
    for (const ent of readdirSync(dir, { withFileTypes: true })) {
      const p = join(dir, ent.name);
      if (ent.isDirectory()) walk(p);
      else if (ent.isFile() && isEventFileName(ent.name)) {
        const rel = relative(root, dir);
        out.push({ run: rel === "" ? "." : rel.split(sep).join("/"), path: p });
      }
    }
  };
  walk(root);
  out.sort((a, b) => (a.run < b.run ? -1 : a.run > b.run ? 1 : a.path < b.path ? -1 : a.path > b.path ? 1 : 0));
  return out;
}

interface FileState {
  readonly ref: EventFileRef;
  offset: number;
  pendingBytes: number;
  firstWallTime?: number;
  /** Points read so far, in file order. */
  points: ScalarPoint[];
  /** Points read by the current poll, not yet handed out. */
  fresh: ScalarPoint[];
}

export interface EventRun {
  readonly run: string;
  /** The run's files, oldest first by the wall time of their first event (files with no event yet last). */
  readonly files: string[];
  /** Every point read so far, file after file in that order. */
  readonly points: ScalarPoint[];
}

export interface PollResult {
  /** New points per run key since the previous poll (runs with none are absent). */
  readonly added: Map<string, ScalarPoint[]>;
  /** Files that end in a half-written record, with the bytes waiting. */
  readonly pending: { path: string; bytes: number }[];
}

function byFirstEvent(a: FileState, b: FileState): number {
  const ta = a.firstWallTime ?? Infinity;
  const tb = b.firstWallTime ?? Infinity;
  if (ta !== tb) return ta < tb ? -1 : 1;
  return basename(a.ref.path) < basename(b.ref.path) ? -1 : basename(a.ref.path) > basename(b.ref.path) ? 1 : 0;
}

/** Incremental reader of all event files under one root. */
export class EventFolderReader {
  private readonly files = new Map<string, FileState>();

  constructor(readonly root: string) {}

  /** Read what is new: files that appeared and bytes appended since the last call. */
  poll(): PollResult {
    for (const ref of listEventFiles(this.root)) {
      if (!this.files.has(ref.path)) this.files.set(ref.path, { ref, offset: 0, pendingBytes: 0, points: [], fresh: [] });
    }
    const states = [...this.files.values()];
    for (const s of states) {
      const buf = readBytesFrom(s.ref.path, s.offset);
      if (buf.length === 0) continue;
      const r = decodeEventBytes(buf, s.offset, s.ref.path);
      if (s.firstWallTime === undefined && r.firstWallTime !== undefined) s.firstWallTime = r.firstWallTime;
      s.offset = r.offset;
      s.pendingBytes = r.pendingBytes;
      s.fresh = r.points;
      for (const p of r.points) s.points.push(p);
    }
    const added = new Map<string, ScalarPoint[]>();
    for (const s of [...states].sort(byFirstEvent)) {
      const fresh = s.fresh;
      s.fresh = [];
      if (fresh.length === 0) continue;
      const list = added.get(s.ref.run);
      if (list === undefined) added.set(s.ref.run, [...fresh]);
      else list.push(...fresh);
    }
    const pending = states.filter((s) => s.pendingBytes > 0).map((s) => ({ path: s.ref.path, bytes: s.pendingBytes }));
    return { added, pending };
  }

  /** Every run read so far, sorted by run key, files oldest first. */
  runs(): EventRun[] {
    const byRun = new Map<string, FileState[]>();
    for (const s of this.files.values()) {
      const list = byRun.get(s.ref.run);
      if (list === undefined) byRun.set(s.ref.run, [s]);
      else list.push(s);
    }
    return [...byRun.keys()].sort().map((run) => {
      const files = byRun.get(run)!.sort(byFirstEvent);
      return { run, files: files.map((f) => f.ref.path), points: files.flatMap((f) => f.points) };
    });
  }

  /** Byte offset reached in each file (for a status line or a resume). */
  offsets(): Map<string, number> {
    return new Map([...this.files.values()].map((s) => [s.ref.path, s.offset]));
  }
}
