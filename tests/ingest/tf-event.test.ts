import { readFileSync } from "node:fs";
import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { decodeEventBytes, pointsByTag } from "../../src/ingest/event-file.js";
import { decodeEvent, DT_FLOAT } from "../../src/ingest/tf-event.js";
import { readRecords } from "../../src/ingest/tfrecord.js";
import { catchInputError } from "../helpers/input-error.js";
import { trainingLog } from "../helpers/shared-fixtures.js";
import { eventFile, type ScalarEncoding } from "../helpers/tfevents-writer.js";

describe("event files written by real trainers (shared/fixtures/training-logs/README.md)", () => {
  it("tf2-scalar.tfevents: 100 scalars of my_metric = 0.5 x step for steps 0..99 (TF2 DT_FLOAT tensors)", () => {
    const buf = readFileSync(trainingLog("tf2-scalar.tfevents"));
    const r = decodeEventBytes(buf, 0, "tf2-scalar.tfevents");
    expect(r.pendingBytes).toBe(0);
    expect(r.offset).toBe(buf.length);
    expect(r.points.length).toBe(100);
    expect(r.points.map((p) => p.step)).toEqual(Array.from({ length: 100 }, (_, i) => i));
    for (const p of r.points) {
      expect(p.tag).toBe("my_metric");
      expect(p.value).toBe(0.5 * p.step); // exact: halves of integers < 100 are exact in float32
    }
    // the first record is the file_version event "brain.Event:2" (README), the rest carry a scalar tensor
    const recs = readRecords(buf).records;
    expect(decodeEvent(recs[0]).fileVersion).toBe("brain.Event:2");
    const v = decodeEvent(recs[1]).values[0];
    expect(v.pluginName).toBe("scalars");
    expect(v.tensor?.dtype).toBe(DT_FLOAT);
    expect(v.simpleValue).toBeUndefined();
  });

  it("sb3-ppo-reacher.tfevents: 49 simple_value points of rollout/ep_rew_mean at steps 2048, 4096, ...", () => {
    const buf = readFileSync(trainingLog("sb3-ppo-reacher.tfevents"));
    const tags = pointsByTag(decodeEventBytes(buf, 0, "sb3").points);
    const rew = tags.get("rollout/ep_rew_mean")!;
    expect(rew.length).toBe(49);
    expect(rew.map((p) => p.step)).toEqual(Array.from({ length: 49 }, (_, i) => 2048 * (i + 1)));
    expect(tags.get("rollout/ep_len_mean")!.length).toBe(49);
    expect(tags.get("time/fps")!.length).toBe(49);
    for (const [tag, pts] of tags) if (tag.startsWith("train/")) expect(pts.length).toBe(48);
  });

  it("empty-run.tfevents: the file_version event only, zero scalars, no error", () => {
    const buf = readFileSync(trainingLog("empty-run.tfevents"));
    expect(buf.length).toBe(88);
    const r = decodeEventBytes(buf, 0, "empty-run.tfevents");
    expect(r.points).toEqual([]);
    expect(r.events).toBe(1);
    expect(r.pendingBytes).toBe(0);
  });
});

const ENCODINGS: ScalarEncoding[] = ["simple", "float-val", "float-content", "double-val", "double-content", "half-val"];

describe("event files written by the test encoder", () => {
  it("reads every scalar encoding: simple_value, float_val, double_val, half_val, tensor_content", () => {
    const events = ENCODINGS.map((encoding, i) => ({ wallTime: 1_700_000_001 + i, step: 10 * i, scalars: [{ tag: `m/${encoding}`, value: -2.5 * (i + 1), encoding }] }));
    const r = decodeEventBytes(eventFile(events), 0, "gen");
    expect(r.points.map((p) => [p.tag, p.step, p.value])).toEqual(ENCODINGS.map((e, i) => [`m/${e}`, 10 * i, -2.5 * (i + 1)]));
    expect(r.points[5].wallTime).toBe(1_700_000_006);
  });

  it("keeps doubles at full precision and rounds simple_value to float32 (summary.proto: float simple_value)", () => {
    const r = decodeEventBytes(eventFile([{ wallTime: 1, step: 1, scalars: [{ tag: "d", value: 0.1, encoding: "double-val" }, { tag: "f", value: 0.1 }] }]), 0, "gen");
    expect(r.points[0].value).toBe(0.1);
    expect(r.points[1].value).toBe(Math.fround(0.1));
  });

  it("a truncated tail reads as pending, then every point once the rest is appended", () => {
    const full = eventFile([1, 2, 3].map((s) => ({ wallTime: s, step: s, scalars: [{ tag: "x", value: s, encoding: "float-content" as const }] })));
    const cut = full.length - 7;
    const first = decodeEventBytes(full.subarray(0, cut), 0, "gen");
    expect(first.points.map((p) => p.step)).toEqual([1, 2]);
    expect(first.pendingBytes).toBeGreaterThan(0);
    const second = decodeEventBytes(full.subarray(first.offset), first.offset, "gen");
    expect(second.points.map((p) => p.step)).toEqual([3]);
    expect(second.offset).toBe(full.length);
    expect(second.pendingBytes).toBe(0);
  });

  it("a flipped byte is an InputError naming the file and the record's byte offset", () => {
    const full = Buffer.from(eventFile([1, 2].map((s) => ({ wallTime: s, step: s, scalars: [{ tag: "x", value: s }] }))));
    const r = readRecords(full);
    const at = r.recordOffsets[2];
    full[at + 14] ^= 0xff;
    const err = catchInputError(() => decodeEventBytes(full.subarray(r.recordOffsets[1]), r.recordOffsets[1], "runs/a/events.out.tfevents.1"));
    expect(err.code).toBe("ingest.crc");
    expect(err.where).toBe(`runs/a/events.out.tfevents.1 byte ${at}`);
    expect(err.message).toContain(`byte ${at}`);
  });

  it("a record with a good CRC but a malformed Event is ingest.event at that record", async () => {
    const { frameRecord } = await import("../../src/ingest/tfrecord.js");
    const bad = frameRecord(Uint8Array.from([0x0a, 0x05, 0x41])); // field 1 as length-delimited, 5 bytes claimed, 1 present
    expect(() => decodeEventBytes(bad, 0, "f")).toThrow(/not a valid Event message/);
  });

  it("property: events cut at any byte and read in two chunks give the same points as one pass", () => {
    const scalar = fc.record({
      tag: fc.constantFrom("a", "rollout/ep_rew_mean", "intent"),
      value: fc.integer({ min: -4000, max: 4000 }).map((k) => k / 8), // exact in half, float and double
      encoding: fc.constantFrom(...ENCODINGS),
    });
    const event = fc.record({ wallTime: fc.double({ min: 1e9, max: 2e9, noNaN: true }), step: fc.integer({ min: 0, max: 2 ** 40 }), scalars: fc.array(scalar, { maxLength: 3 }) });
    fc.assert(
      fc.property(fc.array(event, { maxLength: 6 }), fc.double({ min: 0, max: 1, noNaN: true }), (events, frac) => {
        const full = eventFile(events);
        const whole = decodeEventBytes(full, 0, "f");
        const cut = Math.floor(frac * full.length);
        const a = decodeEventBytes(full.subarray(0, cut), 0, "f");
        const b = decodeEventBytes(full.subarray(a.offset), a.offset, "f");
        expect([...a.points, ...b.points]).toEqual(whole.points);
        expect(b.offset).toBe(full.length);
        expect(whole.points.length).toBe(events.reduce((n, e) => n + e.scalars.length, 0));
      }),
    );
  });
});
