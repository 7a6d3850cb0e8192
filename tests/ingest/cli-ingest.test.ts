/**
 * `gapwatch ingest` end to end: the fixture relations through the command, follow mode on a growing
 * file against a one-shot read of the finished file, bad input (one line, exit 2, nothing written),
 * --fail-on-alert, the runs listing and the report of an external run.
 */
import { appendFileSync, copyFileSync, existsSync, readFileSync, readdirSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { runIngest, type IngestClock } from "../../src/app/ingest.js";
import { memoryIO } from "../../src/cli/io.js";
import { runCli } from "../../src/cli/program.js";
import { simulateExternalRun, SIM_DESIGNER_RANGE, SIM_INTENT_RANGE } from "../../src/monitor/external-sim.js";
import { createRng } from "../../src/rng/rng.js";
import type { Alert } from "../../src/run/schema.js";
import { trainingLog } from "../helpers/shared-fixtures.js";
import { tempDirsRemovedAfterAll } from "../helpers/temp-dirs.js";
import { eventFile } from "../helpers/tfevents-writer.js";
import { frameRecord } from "../../src/ingest/tfrecord.js";
import { encodeEvent } from "../helpers/tfevents-writer.js";

const temp = tempDirsRemovedAfterAll();

async function cli(args: string[]) {
  const io = memoryIO();
  const code = await runCli(args, io);
  return { code, out: io.stdout, err: io.stderr, json: () => JSON.parse(io.stdout) };
}

/** A simulated external run (src/monitor/external-sim.ts) as our JSON-lines checkpoint schema. */
function simJsonl(seed: number, kind: "aligned" | "decoupled"): string {
  const run = simulateExternalRun(createRng(seed), kind, 20);
  return run.checkpoints.map((c) => JSON.stringify({ step: c.step, designer: c.designer, intent: c.intent, designerStd: c.designerStd, intentStd: c.intentStd, episodes: c.episodes }) + "\n").join("");
}

/** The same run as an event file: one record per checkpoint with two simple_value tags. */
function simEventRecords(seed: number, kind: "aligned" | "decoupled"): Uint8Array[] {
  const run = simulateExternalRun(createRng(seed), kind, 20);
  return [
    frameRecord(encodeEvent({ wallTime: 1_700_000_000, step: 0, fileVersion: "brain.Event:2" })),
    ...run.checkpoints.map((c, i) => frameRecord(encodeEvent({ wallTime: 1_700_000_001 + i, step: c.step, scalars: [{ tag: "eval/designer", value: c.designer }, { tag: "eval/intent", value: c.intent }] }))),
  ];
}

const RANGES = ["--designer-range", `${SIM_DESIGNER_RANGE.low}:${SIM_DESIGNER_RANGE.high}`, "--intent-range", `${SIM_INTENT_RANGE.low}:${SIM_INTENT_RANGE.high}`];

describe("gapwatch ingest: fixture relations", () => {
  it("TF2 event file: 100 checkpoints of my_metric, value 0.5 x step", async () => {
    // Source: shared/fixtures/training-logs/README.md (tf.summary.scalar("my_metric", 0.5*step, step=step), steps 0..99).
    const runs = temp("ingest-tf2");
    const r = await cli(["ingest", trainingLog("tf2-scalar.tfevents"), "--designer", "my_metric", "--intent", "my_metric", "--runs-dir", runs, "--json"]);
    expect(r.code).toBe(0);
    const doc = r.json();
    expect(doc.checkpoints).toHaveLength(100);
    doc.checkpoints.forEach((c: { step: number; designer: number }, i: number) => {
      expect(c.step).toBe(i);
      expect(c.designer).toBeCloseTo(0.5 * i, 5);
    });
    expect(doc.relative).toBe(true);
    expect(doc.reason).toContain("relative");
    expect(Object.keys(doc)).toEqual(expect.arrayContaining(["run", "source", "checkpoints", "verdict", "alerts", "relative"]));
  });

  it("PPO event file vs the same run's monitor CSV: the same curve within 1e-6 relative where both have a point", async () => {
    // Source: shared/fixtures/training-logs/README.md: rollout/ep_rew_mean at step S = mean of the last
    // (up to) 100 episode returns r of the monitor CSV whose cumulative length l <= S (float32 rounding).
    const runs = temp("ingest-ppo");
    const ev = await cli(["ingest", trainingLog("sb3-ppo-reacher.tfevents"), "--designer", "rollout/ep_rew_mean", "--intent", "rollout/ep_rew_mean", "--runs-dir", runs, "--json"]);
    const csv = await cli(["ingest", trainingLog("sb3-ppo-reacher.monitor.csv"), "--designer", "r", "--intent", "r", "--window", "2048", "--rolling", "100", "--runs-dir", runs, "--json"]);
    expect(ev.code).toBe(0);
    expect(csv.code).toBe(0);
    const a = new Map<number, number>(ev.json().checkpoints.map((c: { step: number; designer: number }) => [c.step, c.designer]));
    const common = csv.json().checkpoints.filter((c: { step: number }) => a.has(c.step));
    expect(common.length).toBe(49);
    for (const c of common) expect(Math.abs(c.designer - a.get(c.step)!) / Math.abs(a.get(c.step)!)).toBeLessThan(1e-6);
    expect(csv.json().source.format).toBe("monitor-csv");
    expect(csv.json().source.window).toBe(2048);
  });
});

describe("gapwatch ingest --follow", () => {
  it("a file appended in chunks (one record split across two writes) gives the one-shot checkpoints and alerts; the first alert fires before the writer finishes", async () => {
    const dir = temp("ingest-follow");
    const records = simEventRecords(1, "decoupled");
    const whole = Buffer.concat(records);
    // Chunks of 5 records; the cut of chunk 3 falls in the middle of a record (a split record).
    const cuts: number[] = [];
    let at = 0;
    for (let i = 0; i < records.length; i += 5) {
      at += records.slice(i, i + 5).reduce((n, r) => n + r.length, 0);
      cuts.push(at);
    }
    cuts[2] -= 7;
    const file = join(dir, "events.out.tfevents.1");
    writeFileSync(file, whole.subarray(0, cuts[0]));
    let next = 1;
    let firstAlertChunk: number | null = null;
    let t = 0;
    // The injected clock's sleep is the writer: each poll interval appends the next chunk.
    const clock: IngestClock = {
      now: () => t,
      sleep: async (ms) => {
        t += ms;
        if (next < cuts.length) {
          appendFileSync(file, whole.subarray(cuts[next - 1], cuts[next]));
          next++;
        }
      },
    };
    const ranges = { designerRange: SIM_DESIGNER_RANGE, intentRange: SIM_INTENT_RANGE };
    const alerts: Alert[] = [];
    const followed = await runIngest({
      paths: [file],
      designer: "eval/designer",
      intent: "eval/intent",
      ...ranges,
      runsDir: join(dir, "runs-follow"),
      follow: { idleSeconds: 2, pollMs: 100 },
      clock,
      onAlert: (a) => {
        alerts.push(a);
        firstAlertChunk ??= next;
      },
    });
    expect(next).toBe(cuts.length);
    const once = await runIngest({ paths: [file], designer: "eval/designer", intent: "eval/intent", ...ranges, runsDir: join(dir, "runs-once") });
    expect(followed.doc.checkpoints).toEqual(once.doc.checkpoints);
    expect(followed.doc.alerts).toEqual(once.doc.alerts);
    expect(followed.doc.verdict).toBe(once.doc.verdict);
    expect(followed.doc.run).toBe(once.doc.run);
    expect(alerts.length).toBeGreaterThan(0);
    expect(alerts).toEqual(once.doc.alerts.slice(0, alerts.length));
    expect(firstAlertChunk).not.toBeNull();
    expect(firstAlertChunk!).toBeLessThan(cuts.length);
  });

  it("through the CLI: --follow --idle 0 on a finished file stores what a one-shot read stores; --idle without --follow is refused", async () => {
    const dir = temp("ingest-follow-cli");
    writeFileSync(join(dir, "dec.jsonl"), simJsonl(3, "decoupled"));
    const args = ["ingest", join(dir, "dec.jsonl"), "--designer", "designer", "--intent", "intent", ...RANGES, "--runs-dir", join(dir, "runs"), "--json"];
    const once = await cli(args);
    const followed = await cli([...args, "--follow", "--idle", "0"]);
    expect(followed.code).toBe(0);
    expect(followed.json().checkpoints).toEqual(once.json().checkpoints);
    expect(followed.json().alerts).toEqual(once.json().alerts);
    const bad = await cli([...args, "--idle", "5"]);
    expect(bad.code).toBe(2);
    expect(bad.err).toContain("only applies with --follow");
  });

  it("an abort signal stops the loop: stored as interrupted, CLI-equivalent status", async () => {
    const dir = temp("ingest-abort");
    const file = join(dir, "log.jsonl");
    writeFileSync(file, simJsonl(2, "aligned"));
    const signal = { aborted: false };
    let t = 0;
    const out = await runIngest({
      paths: [file],
      designer: "designer",
      intent: "intent",
      runsDir: join(dir, "runs"),
      follow: { pollMs: 10 },
      signal,
      clock: { now: () => t, sleep: async (ms) => void ((t += ms), (signal.aborted = t >= 50)) },
    });
    expect(out.result.status).toBe("interrupted");
    expect(out.result.reason).toContain("interrupted");
  });
});

describe("gapwatch ingest: bad input is one line, exit 2, nothing written", () => {
  const cases: [string, (dir: string) => string, string[]][] = [
    [
      "bad CRC",
      (d) => {
        const b = Buffer.from(readFileSync(trainingLog("tf2-scalar.tfevents")));
        b[200] ^= 0xff;
        writeFileSync(join(d, "bad.tfevents"), b);
        return join(d, "bad.tfevents");
      },
      ["my_metric", "my_metric"],
    ],
    [
      "truncated header",
      (d) => {
        writeFileSync(join(d, "t.tfevents"), eventFile([{ wallTime: 1, step: 1, scalars: [{ tag: "a", value: 1 }] }]).subarray(0, 6));
        return join(d, "t.tfevents");
      },
      ["a", "a"],
    ],
    ["unknown tag", () => trainingLog("tf2-scalar.tfevents"), ["my_metrc", "my_metric"]],
    [
      "non-numeric value",
      (d) => {
        writeFileSync(join(d, "v.csv"), "step,d,i\n1,0.5,0.5\n2,abc,0.6\n");
        return join(d, "v.csv");
      },
      ["d", "i"],
    ],
    [
      "empty file",
      (d) => {
        writeFileSync(join(d, "e.csv"), "");
        return join(d, "e.csv");
      },
      ["d", "i"],
    ],
  ];
  for (const [name, make, [d, i]] of cases) {
    it(name, async () => {
      const dir = temp("ingest-bad");
      const runs = join(dir, "runs");
      const r = await cli(["ingest", make(dir), "--designer", d, "--intent", i, "--runs-dir", runs]);
      expect(r.code).toBe(2);
      expect(r.err.trim().split("\n")).toHaveLength(1);
      expect(r.err).toMatch(/^error \[(ingest|input)\./);
      expect(r.out).toBe("");
      expect(existsSync(runs)).toBe(false);
    });
  }

  it("the unknown-tag line lists the names and suggests the close one", async () => {
    const r = await cli(["ingest", trainingLog("sb3-ppo-reacher.tfevents"), "--designer", "rollout/ep_rew_mean", "--intent", "rollout/ep_rew_men", "--runs-dir", temp("ingest-dym")]);
    expect(r.code).toBe(2);
    expect(r.err).toContain('did you mean "rollout/ep_rew_mean"?');
    expect(r.err).toContain('"time/fps"');
  });
});

describe("gapwatch ingest: gating, listing, report", () => {
  it("--fail-on-alert exits 3 on a decoupled simulated log and 0 on an aligned one", async () => {
    const dir = temp("ingest-gate");
    writeFileSync(join(dir, "dec.jsonl"), simJsonl(1, "decoupled"));
    writeFileSync(join(dir, "ali.jsonl"), simJsonl(1, "aligned"));
    const runs = join(dir, "runs");
    const dec = await cli(["ingest", join(dir, "dec.jsonl"), "--designer", "designer", "--intent", "intent", ...RANGES, "--runs-dir", runs, "--fail-on-alert", "--json"]);
    const ali = await cli(["ingest", join(dir, "ali.jsonl"), "--designer", "designer", "--intent", "intent", ...RANGES, "--runs-dir", runs, "--fail-on-alert", "--json"]);
    expect(dec.code).toBe(3);
    expect(dec.json().verdict).toBe("decoupled");
    expect(dec.json().relative).toBe(false);
    expect(dec.json().alerts[0]).toEqual({ step: expect.any(Number), kind: "intent-drop", magnitude: expect.any(Number), message: expect.any(String) });
    expect(ali.code).toBe(0);
    expect(ali.json().verdict).toBe("aligned");

    const listed = await cli(["runs", "--runs-dir", runs, "--json"]);
    const rows = listed.json().runs as { runId: string; source?: string }[];
    expect(rows.map((r) => r.source).sort()).toEqual(["ali.jsonl", "dec.jsonl"]);
    const text = await cli(["runs", "--runs-dir", runs]);
    expect(text.out).toContain("source");
    expect(text.out).toContain("dec.jsonl");

    const runDir = dec.json().runDir as string;
    expect(readdirSync(runDir).sort()).toEqual(["alerts.jsonl", "checkpoints.jsonl", "manifest.json", "summary.json"]);
    const manifest = JSON.parse(readFileSync(join(runDir, "manifest.json"), "utf8"));
    expect(manifest.kind).toBe("external");
    expect(manifest.source.files[0].bytes).toBe(readFileSync(join(dir, "dec.jsonl")).length);
    expect(manifest.source.files[0].sha256).toMatch(/^[0-9a-f]{64}$/);
    const rep = await cli(["report", runDir]);
    expect(rep.code).toBe(0);
    const html = readFileSync(join(runDir, "report.html"), "utf8");
    expect(html).toContain("external training log");
    expect(html).toContain("dec.jsonl");
    expect(html).toContain("Evidence, not certification");
    expect(html).toContain("intent-drop");
  });

  it("the run id is deterministic: the same log ingested twice (from two places) is one run", async () => {
    const dir = temp("ingest-id");
    copyFileSync(trainingLog("tf2-scalar.tfevents"), join(dir, "tf2-scalar.tfevents"));
    const runs = join(dir, "runs");
    const a = await cli(["ingest", trainingLog("tf2-scalar.tfevents"), "--designer", "my_metric", "--intent", "my_metric", "--runs-dir", runs, "--json"]);
    const b = await cli(["ingest", join(dir, "tf2-scalar.tfevents"), "--designer", "my_metric", "--intent", "my_metric", "--runs-dir", runs, "--json"]);
    const c = await cli(["ingest", join(dir, "tf2-scalar.tfevents"), "--designer", "my_metric", "--intent", "my_metric", "--designer-range", "0:50", "--runs-dir", runs, "--json"]);
    expect(a.json().run).toBe(b.json().run);
    expect(c.json().run).not.toBe(a.json().run);
  });
});
