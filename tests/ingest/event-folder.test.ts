import { appendFileSync, copyFileSync, mkdirSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { EventFolderReader, listEventFiles } from "../../src/ingest/event-folder.js";
import { catchInputError } from "../helpers/input-error.js";
import { trainingLog } from "../helpers/shared-fixtures.js";
import { tempDirsRemovedAfterAll } from "../helpers/temp-dirs.js";
import { eventFile } from "../helpers/tfevents-writer.js";

const newDir = tempDirsRemovedAfterAll();

const scalarEvents = (tag: string, steps: number[], t0: number) => steps.map((s) => ({ wallTime: t0 + s, step: s, scalars: [{ tag, value: s / 2 }] }));

describe("event folders", () => {
  it("keeps runs in subfolders apart and orders each run's files by the wall time of their first event", () => {
    const root = newDir("ingest-folder");
    mkdirSync(join(root, "ppo", "seed_1"), { recursive: true });
    mkdirSync(join(root, "dqn"), { recursive: true });
    // Names sort the other way round from the wall times: the reader must go by the first event's time.
    writeFileSync(join(root, "ppo", "seed_1", "events.out.tfevents.a"), eventFile(scalarEvents("r", [30, 40], 2000), 2000));
    writeFileSync(join(root, "ppo", "seed_1", "events.out.tfevents.b"), eventFile(scalarEvents("r", [10, 20], 1000), 1000));
    copyFileSync(trainingLog("tf2-scalar.tfevents"), join(root, "dqn", "run.tfevents"));
    copyFileSync(trainingLog("empty-run.tfevents"), join(root, "events.out.tfevents.root"));
    writeFileSync(join(root, "notes.txt"), "not an event file");

    expect(listEventFiles(root).map((f) => f.run)).toEqual([".", "dqn", "ppo/seed_1", "ppo/seed_1"]);
    const reader = new EventFolderReader(root);
    const first = reader.poll();
    expect([...first.added.keys()].sort()).toEqual(["dqn", "ppo/seed_1"]);
    expect(first.added.get("ppo/seed_1")!.map((p) => p.step)).toEqual([10, 20, 30, 40]);
    expect(first.added.get("dqn")!.length).toBe(100);
    const runs = reader.runs();
    expect(runs.map((r) => r.run)).toEqual([".", "dqn", "ppo/seed_1"]);
    expect(runs[2].files.map((f) => f.slice(-1))).toEqual(["b", "a"]);
    expect(runs[0].points).toEqual([]);
  });

  it("follows a growing file: reads only appended bytes, waits on a half-written record", () => {
    const root = newDir("ingest-follow");
    const file = join(root, "events.out.tfevents.live");
    const full = eventFile(scalarEvents("ep_return", [1, 2, 3, 4], 5000), 5000);
    const cut = full.length - 5;
    writeFileSync(file, full.subarray(0, cut));
    const reader = new EventFolderReader(root);
    const a = reader.poll();
    expect(a.added.get(".")!.map((p) => p.step)).toEqual([1, 2, 3]);
    expect(a.pending).toEqual([{ path: file, bytes: cut - reader.offsets().get(file)! }]);
    expect(reader.poll().added.size).toBe(0); // nothing new yet
    appendFileSync(file, full.subarray(cut));
    const b = reader.poll();
    expect(b.added.get(".")!.map((p) => p.step)).toEqual([4]);
    expect(b.pending).toEqual([]);
    expect(reader.offsets().get(file)).toBe(full.length);
    // a new file appearing later joins its run
    writeFileSync(join(root, "events.out.tfevents.next"), eventFile(scalarEvents("ep_return", [5], 9000), 9000));
    expect(reader.poll().added.get(".")!.map((p) => p.step)).toEqual([5]);
    expect(reader.runs()[0].points.map((p) => p.step)).toEqual([1, 2, 3, 4, 5]);
  });

  it("a damaged file is an InputError naming the file and byte offset", () => {
    const root = newDir("ingest-bad");
    const bytes = Buffer.from(eventFile(scalarEvents("x", [1, 2], 1)));
    bytes[bytes.length - 10] ^= 0x20;
    writeFileSync(join(root, "events.out.tfevents.bad"), bytes);
    const err = catchInputError(() => new EventFolderReader(root).poll());
    expect(err.where).toMatch(/events\.out\.tfevents\.bad byte \d+$/);
  });
});
