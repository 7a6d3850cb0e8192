import { readFileSync } from "node:fs";
import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { decodeEventBytes, pointsByTag } from "../../src/ingest/event-file.js";
import { episodeCheckpoints, episodeColumn, looksLikeMonitorCsv, MonitorCsvReader, readMonitorCsv } from "../../src/ingest/monitor-csv.js";
import { rollingMean, windowCheckpoints } from "../../src/ingest/windows.js";
import { InputError } from "../../src/errors.js";
import { trainingLog } from "../helpers/shared-fixtures.js";
import { catchInputError } from "../helpers/input-error.js";

const MONITOR = trainingLog("sb3-ppo-reacher.monitor.csv");

describe("the monitor CSV of a real run (shared/fixtures/training-logs/README.md)", () => {
  const { header, episodes, pendingChars } = readMonitorCsv(readFileSync(MONITOR), MONITOR);

  it("has 501 episodes, every l = 200, first r = -214.604103", () => {
    expect(episodes.length).toBe(501);
    expect(episodes.every((e) => e.l === 200)).toBe(true);
    expect(episodes[0].r).toBe(-214.604103);
    expect(episodes[500].step).toBe(501 * 200);
    expect(header.columns).toEqual(["r", "l", "t"]);
    expect(header.meta.env_id).toBe("None");
    expect(pendingChars).toBe(0);
    expect(looksLikeMonitorCsv(readFileSync(MONITOR, "utf8"))).toBe(true);
  });

  it("rollout/ep_rew_mean of the same run's event file is the mean of the last <= 100 returns with cumulative l <= step", () => {
    // The relation the README states; the trainer logs that mean as float32 (simple_value), so the
    // relative error bound is float32 rounding (2^-24 ~ 6e-8 < 1e-7).
    const rew = pointsByTag(decodeEventBytes(readFileSync(trainingLog("sb3-ppo-reacher.tfevents")), 0, "sb3").points).get("rollout/ep_rew_mean")!;
    expect(rew.length).toBe(49);
    const returns = episodeColumn(episodes, "r");
    for (const p of rew) {
      const expected = rollingMean(returns, p.step)!;
      expect(Math.abs(p.value - expected) / Math.abs(expected)).toBeLessThan(1e-7);
    }
    // Window checkpoints of 2048 steps: the first pools the 10 episodes ending at 200..2000, so its mean
    // is the trainer's first ep_rew_mean (it had seen exactly those 10 episodes at step 2048).
    const first = episodeCheckpoints(episodes, "r", 2048)[0];
    expect([first.step, first.count]).toEqual([2048, 10]);
    expect(Math.abs(first.mean - rew[0].value) / Math.abs(first.mean)).toBeLessThan(1e-7);
    expect(first.interval!.lower).toBeLessThan(first.mean);
    // a cross-check that can fail: with a 10-episode window the relation breaks
    expect(rew.some((p) => Math.abs(p.value - rollingMean(returns, p.step, 10)!) / Math.abs(p.value) > 1e-3)).toBe(true);
  });
});

const META = '#{"t_start": 1700000000.5, "env_id": "Orchard-v0"}\n';

describe("monitor CSVs written in the test", () => {
  it("keeps extra info columns by name (numbers, booleans as 1/0, text as text)", () => {
    const csv = `${META}r,l,t,apples_picked,is_success,note\r\n1.5,10,0.1,3,True,ok\r\n-2,5,0.2,0,False,"late, wet"\r\n`;
    const { header, episodes } = readMonitorCsv(csv, "orchard.monitor.csv");
    expect(header.extraColumns).toEqual(["apples_picked", "is_success", "note"]);
    expect(episodes.map((e) => [e.index, e.r, e.l, e.step])).toEqual([[0, 1.5, 10, 10], [1, -2, 5, 15]]);
    expect(episodes[0].extras.get("apples_picked")).toBe(3);
    expect(episodes[1].extras.get("is_success")).toBe(0);
    expect(episodes[1].extras.get("note")).toBe("late, wet");
    expect(episodeColumn(episodes, "apples_picked")).toEqual([{ step: 10, value: 3 }, { step: 15, value: 0 }]);
    expect(() => episodeColumn(episodes, "note")).toThrow(/expected a number/);
  });

  it("holds back a split last line until its line break arrives", () => {
    const reader = new MonitorCsvReader("live.monitor.csv");
    expect(reader.push(META.slice(0, 20))).toEqual([]);
    expect(reader.push(META.slice(20) + "r,l,t\n4,2,0.5\n7.2")).toHaveLength(1);
    expect(reader.pendingChars).toBe(3);
    const more = reader.push("5,3,0.9\n");
    expect(more.map((e) => [e.r, e.l, e.step])).toEqual([[7.25, 3, 5]]); // "7.2" held back, then "5,3,0.9" completes the row
    expect(reader.pendingChars).toBe(0);
  });

  it("splits a multi-byte UTF-8 character across two byte chunks without damage", () => {
    const bytes = new TextEncoder().encode(`${META}r,l,t,zone\n1,1,0.1,Gärten\n`);
    const cut = bytes.indexOf(0xc3) + 1; // inside the two bytes of "ä"
    const reader = new MonitorCsvReader("m.csv");
    const eps = [...reader.push(bytes.subarray(0, cut)), ...reader.push(bytes.subarray(cut))];
    expect(eps[0].extras.get("zone")).toBe("Gärten");
  });

  it("rejects with file and line: no JSON line, a header without r,l,t, a non-numeric return, an empty file", () => {
    const err = (text: string): InputError => catchInputError(() => readMonitorCsv(text, "bad.csv"));
    expect(err("r,l,t\n1,2,3\n").where).toBe("bad.csv line 1");
    expect(err(`${META}reward,len,t\n`).message).toMatch(/lacks r, l/);
    const nonNum = err(`${META}r,l,t\n1,2,3\nabc,2,3\n`);
    expect([nonNum.code, nonNum.where]).toEqual(["ingest.value", "bad.csv line 4"]);
    expect(err("").code).toBe("ingest.empty");
    expect(err(`${META}r,l`).message).toMatch(/header line/);
  });

  it("property: feeding the file in two chunks cut anywhere gives the same episodes as one pass", () => {
    const row = fc.tuple(fc.integer({ min: -1000, max: 1000 }), fc.integer({ min: 1, max: 300 }), fc.integer({ min: 0, max: 99 }));
    fc.assert(
      fc.property(fc.array(row, { maxLength: 12 }), fc.double({ min: 0, max: 1, noNaN: true }), (rows, frac) => {
        const text = `${META}r,l,t,k\n${rows.map(([r, l, k], i) => `${r / 4},${l},${i / 10},${k}\n`).join("")}`;
        const whole = readMonitorCsv(text, "m").episodes;
        const cut = Math.floor(frac * text.length);
        const reader = new MonitorCsvReader("m");
        const both = [...reader.push(text.slice(0, cut)), ...reader.push(text.slice(cut))];
        expect(both).toEqual(whole);
        expect(whole.map((e) => e.step)).toEqual(rows.map((_, i) => rows.slice(0, i + 1).reduce((s, [, l]) => s + l, 0)));
      }),
    );
  });
});

describe("window checkpoints", () => {
  it("pools episodes ending in (kW, (k+1)W] with mean, sd and a Student t 95% interval", () => {
    // Hand computation: values 1, 2, 3, 6 in window (0, 100]: mean 3, sample sd sqrt(14/3) = 2.1602;
    // t_{0.975, 3} = 3.182446 (t table, e.g. NIST/SEMATECH e-Handbook 1.3.6.7.2); half width
    // 3.182446 * 2.1602 / 2 = 3.43741.
    const pts = [
      { step: 10, value: 1 }, { step: 50, value: 2 }, { step: 99, value: 3 }, { step: 100, value: 6 },
      { step: 101, value: 9 }, { step: 350, value: 4 }, { step: 360, value: 8 },
    ];
    const cps = windowCheckpoints(pts, 100);
    expect(cps.map((c) => [c.step, c.count])).toEqual([[100, 4], [200, 1], [400, 2]]);
    expect(cps[0].mean).toBe(3);
    expect(cps[0].sd!).toBeCloseTo(Math.sqrt(14 / 3), 12);
    expect(cps[0].interval!.upper - 3).toBeCloseTo(3.43741, 4);
    expect(cps[0].closed).toBe(true);
    expect(cps[1]).toMatchObject({ mean: 9, sd: null, interval: null });
    expect(cps[2].closed).toBe(false);
    expect(() => windowCheckpoints(pts, 0)).toThrow(InputError);
  });

  it("property: every episode lands in exactly one window and lower <= mean <= upper", () => {
    fc.assert(
      fc.property(fc.array(fc.record({ step: fc.integer({ min: 1, max: 5000 }), value: fc.integer({ min: -50, max: 50 }) })), fc.integer({ min: 1, max: 700 }), (pts, w) => {
        const cps = windowCheckpoints(pts, w);
        expect(cps.reduce((n, c) => n + c.count, 0)).toBe(pts.length);
        for (const c of cps) if (c.interval) expect(c.interval.lower <= c.mean + 1e-9 && c.mean <= c.interval.upper + 1e-9).toBe(true);
      }),
    );
  });
});
