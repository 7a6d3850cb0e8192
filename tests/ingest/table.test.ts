import { readFileSync } from "node:fs";
import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { parseDelimited, detectDelimiter } from "../../src/ingest/csv.js";
import { DelimitedReader, JsonLinesReader, readDelimitedSeries, readJsonLinesSeries } from "../../src/ingest/table.js";
import { detectFormat, parseFormat } from "../../src/ingest/detect.js";
import { selectSeries, seriesFromPoints } from "../../src/ingest/series.js";
import { defaultWindow, niceCeil, ownCheckpoints, ownLineKind } from "../../src/ingest/checkpoints.js";
import { decodeEventBytes } from "../../src/ingest/event-file.js";
import { catchInputError } from "../helpers/input-error.js";
import { trainingLog } from "../helpers/shared-fixtures.js";

describe("RFC 4180 delimited text", () => {
  it("reads the quoted-field cases of RFC 4180 section 2 (rules 5-7)", () => {
    // Rule 6: fields with line breaks, double quotes and commas are enclosed in double quotes;
    // rule 7: a double quote inside a quoted field is escaped by a preceding double quote.
    const text = 'a,b,c\r\n"x, y","say ""hi""","two\r\nlines"\r\n,"",z\r\n';
    const r = parseDelimited(text, ",");
    expect(r.records.map((x) => x.fields)).toEqual([["a", "b", "c"], ["x, y", 'say "hi"', "two\r\nlines"], ["", "", "z"]]);
    expect(r.records.map((x) => x.line)).toEqual([1, 2, 4]);
    expect(r.consumed).toBe(text.length);
  });

  it("leaves an unfinished record (no line break, or an open quote) unconsumed", () => {
    expect(parseDelimited("a,b\n1,2", ",").consumed).toBe(4);
    expect(parseDelimited('a,b\n1,"open\n', ",").consumed).toBe(4);
    expect(parseDelimited("a,b\r", ",").consumed).toBe(0);
  });

  it("rejects a stray quote with the line", () => {
    expect(catchInputError(() => parseDelimited('a,b\n1,2"x\n', ",", 1, "t.csv")).where).toBe("t.csv line 2");
    expect(catchInputError(() => parseDelimited('a,b\n1,"2"x\n', ",", 1, "t.csv")).code).toBe("ingest.csv");
  });

  it("detects comma, tab and semicolon headers, ignoring delimiters inside quotes", () => {
    expect(detectDelimiter("step\treturn\tintent")).toBe("\t");
    expect(detectDelimiter('"a;b",step,x')).toBe(",");
    expect(detectDelimiter("step;x;y")).toBe(";");
  });

  it("property: a table of quoted random fields cut anywhere and fed in two pushes reads like one pass", () => {
    const cell = fc.string({ maxLength: 6 }).map((s) => `"${s.replace(/"/g, '""')}"`);
    fc.assert(
      fc.property(fc.array(fc.array(cell, { minLength: 2, maxLength: 2 }), { maxLength: 6 }), fc.double({ min: 0, max: 1, noNaN: true }), (rows, frac) => {
        const text = rows.map((r) => `${r.join(",")}\r\n`).join("");
        const whole = parseDelimited(text, ",").records.map((r) => r.fields);
        const cut = Math.floor(frac * text.length);
        const a = parseDelimited(text.slice(0, cut), ",");
        const b = parseDelimited(text.slice(a.consumed), ",", a.nextLine);
        expect([...a.records, ...b.records].map((r) => r.fields)).toEqual(whole);
      }),
    );
  });
});

describe("tables as series", () => {
  it("CSV: step column found by default name, numeric columns become series, text columns are set aside", () => {
    const t = readDelimitedSeries("global_step,ep_return,phase,crates_delivered\n100,1.5,warmup,0\n200,,main,2\n300,nan,main,5\n", "log.csv");
    expect(t.stepColumn).toBe("global_step");
    expect(t.textColumns).toEqual(["phase"]);
    expect(t.series.get("ep_return")!.steps).toEqual([100, 300]);
    expect(t.series.get("ep_return")!.values[1]).toBeNaN();
    expect(t.series.get("crates_delivered")!.values).toEqual([0, 2, 5]);
  });

  it("TSV with an explicit step column", () => {
    const t = readDelimitedSeries("wall\titer\tscore\n1.0\t5\t0.25\n2.0\t10\t0.5\n", "log.tsv", { step: "iter" });
    expect(t.series.get("score")).toEqual({ name: "score", steps: [5, 10], values: [0.25, 0.5] });
    expect([...t.series.keys()]).toEqual(["wall", "score"]);
  });

  it("errors name file and line: no step column, text in a numeric column, ragged row, empty file", () => {
    const a = catchInputError(() => readDelimitedSeries("time,x\n1,2\n", "a.csv"));
    expect([a.code, a.where]).toEqual(["ingest.step", "a.csv line 1"]);
    expect(a.message).toContain('"time", "x"');
    const b = catchInputError(() => readDelimitedSeries("step,x\n1,2\n2,oops\n", "b.csv"));
    expect([b.code, b.where]).toEqual(["ingest.value", "b.csv line 3"]);
    expect(catchInputError(() => readDelimitedSeries("step,x\n1,2,3\n", "c.csv")).message).toMatch(/3 fields/);
    expect(catchInputError(() => readDelimitedSeries("", "d.csv")).code).toBe("ingest.empty");
    expect(catchInputError(() => readDelimitedSeries("step,__proto__\n1,2\n", "e.csv")).code).toBe("ingest.column");
  });

  it("CSV holds back a split last line, then reads it when the rest arrives", () => {
    const r = new DelimitedReader("live.csv");
    expect(r.push("step,reward\n10,1.5\n20,2.")).toBe(1);
    expect(r.pendingChars).toBe(5);
    expect(r.push("25\n")).toBe(1);
    expect(r.result().series.get("reward")!.values).toEqual([1.5, 2.25]);
  });

  it("JSON lines: default step key, Python's bare NaN, booleans, nested values as text, a final line without newline", () => {
    const text = '{"_step": 1, "designer": 0.5, "intent": NaN, "ok": true, "cfg": {"a": 1}}\n{"_step": 2, "designer": 1.5, "intent": -Infinity, "ok": false, "cfg": {"a": 2}}';
    const t = readJsonLinesSeries(text, "h.jsonl");
    expect(t.stepColumn).toBe("_step");
    expect(t.series.get("designer")!.values).toEqual([0.5, 1.5]);
    expect(t.series.get("intent")!.values[0]).toBeNaN();
    expect(t.series.get("intent")!.values[1]).toBe(-Infinity);
    expect(t.series.get("ok")!.values).toEqual([1, 0]);
    expect(t.textColumns).toEqual(["cfg"]);
  });

  it("JSON lines: a cut-off last object is held back, never half-read", () => {
    const r = new JsonLinesReader("live.jsonl");
    r.push('{"step": 1, "designer": 2, "intent": 3}\n{"step": 2, "desig');
    const t = r.result(true);
    expect(t.rows).toBe(1);
    expect(r.pendingChars).toBeGreaterThan(0);
    expect(catchInputError(() => readJsonLinesSeries('{"step": 1}\n[1,2]\n', "x.jsonl")).where).toBe("x.jsonl line 2");
    expect(catchInputError(() => readJsonLinesSeries('{"step": 1, "__proto__": 3}\n', "x.jsonl")).code).toBe("ingest.column");
  });
});

describe("format detection from content", () => {
  const enc = (s: string): Uint8Array => new TextEncoder().encode(s);
  it("tells event files, monitor CSVs, JSON lines and CSV apart whatever their names", () => {
    expect(detectFormat(readFileSync(trainingLog("empty-run.tfevents")), "f")).toBe("tfevents");
    expect(detectFormat(readFileSync(trainingLog("sb3-ppo-reacher.monitor.csv")), "f.txt")).toBe("monitor-csv");
    expect(detectFormat(enc('  {"step": 1}\n'), "f.csv")).toBe("jsonl");
    expect(detectFormat(enc("step\tx\n1\t2\n"), "f.jsonl")).toBe("csv");
  });
  it("refuses empty files, damaged event files, a truncated monitor header, unknown text", () => {
    expect(catchInputError(() => detectFormat(new Uint8Array(0), "e")).code).toBe("ingest.empty");
    const damaged = Buffer.from(readFileSync(trainingLog("empty-run.tfevents")));
    damaged[9] ^= 1;
    expect(catchInputError(() => detectFormat(damaged, "d")).where).toBe("d byte 0");
    expect(catchInputError(() => detectFormat(enc('#{"t_start": 1}\nr,l'), "m")).code).toBe("ingest.truncated");
    expect(catchInputError(() => detectFormat(enc("hello world\n"), "h")).code).toBe("ingest.format");
    expect(parseFormat("jsonl")).toBe("jsonl");
    expect(catchInputError(() => parseFormat("xml")).message).toContain("tfevents, monitor-csv, csv, jsonl");
  });
});

describe("series selection", () => {
  const series = seriesFromPoints(decodeEventBytes(readFileSync(trainingLog("sb3-ppo-reacher.tfevents")), 0, "sb3").points);

  it("picks the two series by tag", () => {
    const s = selectSeries(series, { designer: "rollout/ep_rew_mean", intent: "rollout/ep_len_mean" }, "sb3");
    expect(s.designer.values.length).toBe(49);
    expect(s.intent.steps[0]).toBe(2048);
  });

  it("an unknown tag is one line listing what exists, with a did-you-mean", () => {
    const e = catchInputError(() => selectSeries(series, { designer: "rollout/ep_rew_maen", intent: "rollout/ep_len_mean" }, "run.tfevents"));
    expect(e.code).toBe("ingest.series");
    expect(e.where).toBe("run.tfevents");
    expect(e.message).toContain('did you mean "rollout/ep_rew_mean"?');
    expect(e.message).toContain('"time/fps"');
    expect(e.message).not.toContain("\n");
    const long = catchInputError(() => selectSeries(series, { designer: "x".repeat(5000), intent: "time/fps" }, "r"));
    expect(long.message).not.toContain("did you mean");
    expect(long.message.length).toBeLessThan(2000);
  });
});

describe("our JSON-lines schema", () => {
  it("checkpoint lines are read as written", () => {
    const t = readJsonLinesSeries('{"step": 100, "designer": 1, "intent": 0.5, "designerStd": 0.1, "episodes": 4}\n{"step": 200, "designer": 2, "intent": 0.25, "episodes": 5}\n', "c.jsonl");
    expect(ownLineKind(t)).toBe("checkpoints");
    expect(ownCheckpoints(t, "c.jsonl")).toEqual([
      { step: 100, designer: 1, intent: 0.5, designerStd: 0.1, episodes: 4 },
      { step: 200, designer: 2, intent: 0.25, episodes: 5 },
    ]);
  });

  it("episode lines are pooled over step windows (mean, sd, count)", () => {
    const lines = [[20, 1, 0], [40, 3, 1], [60, 5, 1], [80, 7, 0], [120, 10, 2]].map(([s, d, i]) => JSON.stringify({ step: s, designer: d, intent: i })).join("\n");
    const t = readJsonLinesSeries(`${lines}\n`, "e.jsonl");
    expect(ownLineKind(t)).toBe("episodes");
    const cps = ownCheckpoints(t, "e.jsonl", { window: 100 });
    // window (0, 100]: designer 1,3,5,7 -> mean 4, sd sqrt(20/3); intent 0,1,1,0 -> mean 0.5, sd sqrt(1/3)
    expect(cps.map((c) => [c.step, c.designer, c.intent, c.episodes])).toEqual([[100, 4, 0.5, 4], [200, 10, 2, 1]]);
    expect(cps[0].designerStd).toBeCloseTo(Math.sqrt(20 / 3), 12);
    expect(cps[0].intentStd).toBeCloseTo(Math.sqrt(1 / 3), 12);
    expect(cps[1].designerStd).toBeUndefined();
    // default window: median first-episode length 20 -> 10 x 20 = 200 (already round)
    expect(defaultWindow(t.series.get("designer")!.steps)).toBe(200);
  });

  it("niceCeil rounds up to 1, 2 or 5 x 10^k", () => {
    expect([0.3, 1, 3, 7, 10, 11, 2000, 2001].map(niceCeil)).toEqual([0.5, 1, 5, 10, 10, 20, 2000, 5000]);
  });
});
