import { existsSync, mkdtempSync, readdirSync, readFileSync, rmSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { afterAll, describe, expect, it } from "vitest";
import fc from "fast-check";
import { appendJsonLine, writeFileAtomic } from "../../src/store/atomic.js";
import { readJsonLines, readRun, runId } from "../../src/store/run-store.js";
import { canonicalJson } from "../../src/util/canonical-json.js";
import { resolveTrainConfig, runTraining } from "../../src/train/run.js";

const root = mkdtempSync(join(tmpdir(), "gapwatch-store-"));
afterAll(() => rmSync(root, { recursive: true, force: true }));

describe("atomic writes", () => {
  it("replaces the file whole and leaves no temporary file behind", () => {
    const f = join(root, "a.json");
    writeFileAtomic(f, "first\n");
    writeFileAtomic(f, "second\n");
    expect(readFileSync(f, "utf8")).toBe("second\n");
    expect(readdirSync(root).filter((n) => n.endsWith(".tmp"))).toEqual([]);
  });

  it("reads JSON lines, skipping only a torn last line", () => {
    const f = join(root, "b.jsonl");
    appendJsonLine(f, { a: 1 });
    appendJsonLine(f, { a: 2 });
    writeFileSync(f, readFileSync(f, "utf8") + '{"a": 3');
    expect(readJsonLines(f)).toEqual([{ a: 1 }, { a: 2 }]);
    writeFileSync(f, '{"a": 1}\nnot json\n{"a": 2}\n');
    expect(() => readJsonLines(f)).toThrow(/line 2/);
  });

  it("canonical JSON does not depend on key order (property)", () => {
    fc.assert(
      fc.property(fc.dictionary(fc.string({ maxLength: 4 }), fc.integer()), (obj) => {
        const reversed = Object.fromEntries(Object.entries(obj).reverse());
        expect(canonicalJson(reversed)).toBe(canonicalJson(obj));
      }),
    );
  });
});

describe("run directories", () => {
  it("derive the run id from the resolved config", async () => {
    const a = await resolveTrainConfig({ env: "fresh-coat-tug", reward: "fast", seed: 3 });
    const b = await resolveTrainConfig({ env: "fresh-coat-tug", reward: "fast", seed: 3, learner: "q-learning" });
    const c = await resolveTrainConfig({ env: "fresh-coat-tug", reward: "fast", seed: 4 });
    expect(runId(a.config)).toBe(runId(b.config));
    expect(runId(a.config)).toMatch(/^fresh-coat-tug-fast-q-learning-s3-[0-9a-f]{8}$/);
    expect(runId(c.config)).not.toBe(runId(a.config));
  });

  it("give byte-identical checkpoints.jsonl for the same config and seed", async () => {
    const cfg = { env: "quench-hall-run", reward: "light-loss", seed: 7, evaluation: "both" as const, mcEpisodes: 50 };
    const r1 = await runTraining(cfg, { runsDir: join(root, "one") });
    const r2 = await runTraining(cfg, { runsDir: join(root, "two") });
    const a = readFileSync(join(r1.runDir, "checkpoints.jsonl"));
    const b = readFileSync(join(r2.runDir, "checkpoints.jsonl"));
    expect(a.length).toBeGreaterThan(0);
    expect(a.equals(b)).toBe(true);
    expect(a.toString("utf8").trim().split("\n")).toHaveLength(20);
  });

  it("store manifest, summary, alerts and policy that read back as the returned RunResult", async () => {
    const r = await runTraining({ env: "seed-vault-courier", reward: "per-scan", seed: 2 }, { runsDir: join(root, "rt") });
    for (const f of ["manifest.json", "checkpoints.jsonl", "alerts.jsonl", "summary.json", "policy.json"]) expect(existsSync(join(r.runDir, f)), f).toBe(true);
    const manifest = JSON.parse(readFileSync(join(r.runDir, "manifest.json"), "utf8"));
    expect(manifest.config.seed).toBe(2);
    expect(manifest.nodeVersion).toBe(process.version);
    expect(typeof manifest.packageVersion).toBe("string");
    const back = readRun(r.runDir);
    expect(back.verdict).toBe(r.verdict);
    expect(back.status).toBe("complete");
    expect(back.checkpoints).toEqual(r.checkpoints);
    expect(back.alerts).toEqual(r.alerts);
    expect(back.alerts.length).toBeGreaterThan(0);
    const line = JSON.parse(readFileSync(join(r.runDir, "alerts.jsonl"), "utf8").split("\n")[0]);
    expect(line).toMatchObject({ level: "warn", runId: r.runId, kind: r.alerts[0].kind, message: r.alerts[0].message });
  });

  it("mark a run stopped through the signal as interrupted, keeping the checkpoints so far", async () => {
    const signal = { aborted: false };
    let every = 0;
    const r = await runTraining(
      { env: "fresh-coat-tug", reward: "default", seed: 5 },
      {
        runsDir: join(root, "int"),
        signal,
        onProgress: (p) => {
          every ||= p.record.step;
          if (p.record.step >= 5 * every) signal.aborted = true;
        },
      },
    );
    expect(r.status).toBe("interrupted");
    const manifest = JSON.parse(readFileSync(join(r.runDir, "manifest.json"), "utf8"));
    expect(manifest.checkpointEvery).toBe(every);
    // The stop is honoured between batches of steps (within about a second), after the fifth checkpoint and before the end.
    expect(r.steps).toBeGreaterThanOrEqual(5 * every);
    expect(r.steps).toBeLessThan(manifest.config.steps);
    const summary = JSON.parse(readFileSync(join(r.runDir, "summary.json"), "utf8"));
    expect(summary.status).toBe("interrupted");
    expect(summary.reason).toMatch(new RegExp(`^interrupted at step ${r.steps} of ${manifest.config.steps}`));
    const lines = readJsonLines<{ step: number }>(join(r.runDir, "checkpoints.jsonl"));
    expect(lines.map((l) => l.step)).toEqual(Array.from({ length: lines.length }, (_, i) => (i + 1) * every));
    expect(lines.length).toBeGreaterThanOrEqual(5);
    expect(lines[lines.length - 1].step).toBeLessThanOrEqual(r.steps);
    expect(JSON.parse(readFileSync(join(r.runDir, "policy.json"), "utf8")).step).toBe(r.steps);
    expect(readRun(r.runDir).status).toBe("interrupted");
  });
});
