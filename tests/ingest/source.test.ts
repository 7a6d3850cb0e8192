import { appendFileSync, copyFileSync, mkdirSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { IngestSource } from "../../src/ingest/source.js";
import { alignSeries, poolEpisodes } from "../../src/ingest/checkpoints.js";
import { selectSeries } from "../../src/ingest/series.js";
import { rollingMean } from "../../src/ingest/windows.js";
import { InputError } from "../../src/errors.js";
import { trainingLog } from "../helpers/shared-fixtures.js";
import { tempDirsRemovedAfterAll } from "../helpers/temp-dirs.js";

const newDir = tempDirsRemovedAfterAll();

describe("IngestSource", () => {
  it("a folder of the real event files: one series map per run", () => {
    const root = newDir("source-folder");
    mkdirSync(join(root, "ppo"));
    copyFileSync(trainingLog("sb3-ppo-reacher.tfevents"), join(root, "ppo", "events.out.tfevents.1"));
    copyFileSync(trainingLog("tf2-scalar.tfevents"), join(root, "events.out.tfevents.2"));
    const snap = new IngestSource(root).finish();
    expect(snap.format).toBe("tfevents");
    expect([...snap.runs.keys()]).toEqual([".", "ppo"]);
    expect(snap.runs.get(".")!.get("my_metric")!.values.length).toBe(100);
    const s = selectSeries(snap.runs.get("ppo")!, { designer: "rollout/ep_rew_mean", intent: "rollout/ep_len_mean" }, root);
    const cps = alignSeries(s.designer, s.intent, root);
    expect(cps.length).toBe(49);
    expect(cps.every((c) => Math.abs(c.intent - 200) < 1e-9)).toBe(true); // every episode of that run is 200 steps (monitor CSV)
  });

  it("the real monitor CSV through the source: per-episode series on the cumulative-step axis", () => {
    const snap = new IngestSource(trainingLog("sb3-ppo-reacher.monitor.csv")).finish();
    expect(snap.format).toBe("monitor-csv");
    expect(snap.perEpisode).toBe(true);
    const r = snap.runs.get(".")!.get("r")!;
    expect(r.values.length).toBe(501);
    expect(r.steps[0]).toBe(200);
    // the trainer's own rolling mean at its first log step 2048: the last 10 episodes (cumulative l <= 2048)
    expect(rollingMean(r.steps.map((step, i) => ({ step, value: r.values[i] })), 2048)).toBeCloseTo(r.values.slice(0, 10).reduce((a, b) => a + b) / 10, 12);
  });

  it("follows a monitor CSV from an empty file: waits, then reads whole rows only", () => {
    const dir = newDir("source-follow");
    const file = join(dir, "monitor.csv");
    writeFileSync(file, "");
    const src = new IngestSource(file);
    expect(src.poll().format).toBeUndefined();
    appendFileSync(file, '#{"t_start": 1, "env_id": "Depot-v1"}\nr,l,t,parcels\n');
    expect(src.poll().format).toBe("monitor-csv");
    appendFileSync(file, "2.5,100,0.5,3\n-1,50,0.7,");
    const a = src.poll();
    expect(a.runs.get(".")!.get("parcels")!.values).toEqual([3]);
    expect(a.pending).toEqual([{ path: file, bytes: 10 }]);
    appendFileSync(file, "1\n");
    const b = src.poll();
    expect(b.runs.get(".")!.get("parcels")).toEqual({ name: "parcels", steps: [100, 150], values: [3, 1] });
    const s = selectSeries(b.runs.get(".")!, { designer: "r", intent: "parcels" }, file);
    expect(poolEpisodes(s.designer, s.intent, 100, file).map((c) => [c.step, c.designer, c.intent, c.episodes])).toEqual([[100, 2.5, 3, 1], [200, -1, 1, 1]]);
  });

  it("JSON lines: a whole last object without a line break counts at finish; forced formats; empty files", () => {
    const dir = newDir("source-jsonl");
    const file = join(dir, "log.txt");
    writeFileSync(file, '{"step": 1, "designer": 1, "intent": 0}\n{"step": 2, "designer": 2, "intent": 1}');
    const src = new IngestSource(file);
    expect(src.poll().runs.get(".")!.get("designer")!.values).toEqual([1]);
    expect(src.finish().runs.get(".")!.get("designer")!.values).toEqual([1, 2]);

    const tsv = join(dir, "data");
    writeFileSync(tsv, "step\tscore\n5\t0.5\n");
    expect(new IngestSource(tsv, { format: "csv" }).finish().runs.get(".")!.get("score")!.values).toEqual([0.5]);

    const empty = join(dir, "empty.csv");
    writeFileSync(empty, "");
    expect(() => new IngestSource(empty).finish()).toThrow(InputError);
    expect(() => new IngestSource(dir, { format: "csv" }).poll()).toThrow(/folder/);
  });

  it("alignSeries joins on common steps and refuses two series with none", () => {
    const d = { name: "d", steps: [1, 2, 3, 3], values: [10, 20, 30, 31] };
    const i = { name: "i", steps: [3, 1], values: [0.3, 0.1] };
    expect(alignSeries(d, i, "x")).toEqual([{ step: 1, designer: 10, intent: 0.1 }, { step: 3, designer: 31, intent: 0.3 }]);
    expect(() => alignSeries(d, { name: "i", steps: [7], values: [1] }, "x")).toThrow(/share no step/);
  });
});
