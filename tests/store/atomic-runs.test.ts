/**
 * Content-addressed, atomic run folders (src/store/run-store.ts, src/env/inputs.ts):
 * - two sweeps writing the same runs into one runs folder at once leave every run whole;
 * - a process killed mid-run leaves the previous complete run intact and no half run reads complete;
 * - editing a simulator module (or a file it imports) gives a new run id and a new job id.
 * The invariants are the store's own contract (a run folder's checkpoints.jsonl has one line per
 * checkpoint, steps strictly increasing, and the count its summary.json states).
 */
import { spawn } from "node:child_process";
import { cpSync, existsSync, mkdirSync, mkdtempSync, readdirSync, readFileSync, rmSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join, resolve } from "node:path";
import { afterAll, describe, expect, it } from "vitest";
import { runCompare } from "../../src/batch/compare.js";
import { planSweep } from "../../src/batch/plan.js";
import { hashInputs, localImports } from "../../src/env/inputs.js";
import { openIndexForReading } from "../../src/store/index-db.js";
import { readRun, RUN_FILES } from "../../src/store/run-store.js";
import { resolveTrainConfig, runTraining } from "../../src/train/run.js";
import type { CheckpointRecord, RunSummary } from "../../src/run/schema.js";

const root = mkdtempSync(join(tmpdir(), "gapwatch-atomic-"));
const fixtureCopies: string[] = [];
afterAll(() => {
  rmSync(root, { recursive: true, force: true });
  for (const d of fixtureCopies) rmSync(d, { recursive: true, force: true });
});

/** Every run folder directly under `runsDir` is whole: line count = summary count, steps increasing. */
function expectWholeRuns(runsDir: string): string[] {
  const ids = readdirSync(runsDir, { withFileTypes: true })
    .filter((e) => e.isDirectory() && !e.name.startsWith(".") && existsSync(join(runsDir, e.name, RUN_FILES.manifest)))
    .map((e) => e.name);
  for (const id of ids) {
    const dir = join(runsDir, id);
    const lines = readFileSync(join(dir, RUN_FILES.checkpoints), "utf8").split("\n").filter(Boolean);
    const steps = lines.map((l) => (JSON.parse(l) as CheckpointRecord).step);
    const summary = JSON.parse(readFileSync(join(dir, RUN_FILES.summary), "utf8")) as RunSummary;
    expect(lines.length, id).toBe(summary.checkpointCount);
    for (let i = 1; i < steps.length; i++) expect(steps[i], id).toBeGreaterThan(steps[i - 1]);
    expect(readRun(dir).status).toBe("complete");
  }
  return ids;
}

describe("atomic run folders", () => {
  it("two sweeps writing the same runs into one folder at once leave every run whole", async () => {
    const runsDir = join(root, "concurrent");
    const cfg = { runsDir, env: "fresh-coat-tug", rewards: ["default"], learners: ["q-learning"], seeds: [1, 2], steps: 20_000, base: { checkpoints: 20 }, workers: 1, bootstrapSeed: 1, reps: 200 };
    const [a, b] = await Promise.all([runCompare(cfg), runCompare(cfg)]);
    expect(a.stats).toEqual(b.stats);
    const ids = expectWholeRuns(runsDir);
    expect(ids.length).toBe(2);
    for (const r of a.records) expect(r.ok).toBe(true);
    // No temporary folder is left behind by finished runs.
    expect(readdirSync(runsDir).filter((n) => n.startsWith(".tmp-") || n.startsWith(".old-"))).toEqual([]);
  }, 120_000);

  it("two writers of the same run interleaving checkpoint by checkpoint leave one whole run", async () => {
    const runsDir = join(root, "interleaved");
    const input = { env: "fresh-coat-tug", reward: "default", seed: 3, steps: 40_000, checkpoints: 40 };
    // sync: false yields to the event loop after every checkpoint, so the two runs alternate their writes.
    const [a, b] = await Promise.all([runTraining(input, { runsDir }), runTraining(input, { runsDir })]);
    expect(a.runId).toBe(b.runId);
    expect(expectWholeRuns(runsDir)).toEqual([a.runId]);
    expect(readRun(a.runDir).checkpoints).toEqual(a.checkpoints);
  }, 120_000);

  it("a run killed mid-way leaves the previous complete run intact, and nothing reads complete that is not", async () => {
    const runsDir = join(root, "killed");
    const args = [runsDir, "fresh-coat-tug", "default", "400000", "400"];
    const first = await runTraining({ env: "fresh-coat-tug", reward: "default", seed: 1, steps: 400_000, checkpoints: 400 }, { runsDir, sync: true });
    expect(first.status).toBe("complete");
    const before = readFileSync(join(first.runDir, RUN_FILES.checkpoints), "utf8");

    const child = spawn(process.execPath, ["--import", "tsx", resolve("tests/store/child/train-child.ts"), ...args], { stdio: ["ignore", "pipe", "inherit"] });
    const exited = new Promise<NodeJS.Signals | null>((res) => child.on("exit", (_c, sig) => res(sig)));
    let seen = 0;
    child.stdout.on("data", (buf: Buffer) => {
      seen += (buf.toString().match(/checkpoint/g) ?? []).length;
      if (seen >= 5 && !child.killed) child.kill("SIGKILL");
    });
    expect(await exited).toBe("SIGKILL");
    expect(seen).toBeLessThan(400);

    // The finished run is untouched, byte for byte, and still reads complete.
    expect(readFileSync(join(first.runDir, RUN_FILES.checkpoints), "utf8")).toBe(before);
    expect(readRun(first.runDir).status).toBe("complete");
    expect(expectWholeRuns(runsDir)).toEqual([first.runId]);
    // The half run is only a dot-folder, which the index rebuild skips.
    expect(readdirSync(runsDir).some((n) => n.startsWith(".tmp-"))).toBe(true);
    const { index } = openIndexForReading(runsDir);
    try {
      const rows = index.listRuns({});
      expect(rows.map((r) => r.runId)).toEqual([first.runId]);
      expect(rows[0].status).toBe("complete");
    } finally {
      index.close();
    }
  }, 120_000);

  it("a summary that disagrees with checkpoints.jsonl does not read complete", async () => {
    const runsDir = join(root, "torn");
    const r = await runTraining({ env: "fresh-coat-tug", reward: "default", seed: 4, steps: 4_000, checkpoints: 10 }, { runsDir, sync: true });
    const file = join(r.runDir, RUN_FILES.checkpoints);
    const lines = readFileSync(file, "utf8").split("\n").filter(Boolean);
    writeFileSync(file, [...lines, ...lines.slice(0, 3)].join("\n") + "\n");
    const back = readRun(r.runDir);
    expect(back.status).toBe("interrupted");
    expect(back.reason).toMatch(/13 checkpoints but summary.json counts 10/);
  }, 60_000);
});

describe("content-addressed run ids", () => {
  /** A copy of the corridor fixture and the file it imports, at the same depth (its import of src/ still resolves). */
  function copyCorridor(): string {
    const dir = resolve("tests/fixtures/envs", `.edit-${process.pid}-${fixtureCopies.length}`);
    fixtureCopies.push(dir);
    mkdirSync(dir);
    cpSync(resolve("tests/fixtures/envs/corridor-ok.ts"), join(dir, "corridor-ok.ts"));
    const base = readFileSync(resolve("tests/fixtures/envs/_corridor.ts"), "utf8").replaceAll("../../../src/", "../../../../src/");
    writeFileSync(join(dir, "_corridor.ts"), base);
    return dir;
  }

  it("follows a module's local imports", () => {
    const dir = copyCorridor();
    expect(localImports(join(dir, "corridor-ok.ts"))).toEqual([join(dir, "_corridor.ts")]);
    const inputs = hashInputs(join(dir, "corridor-ok.ts"), null, "0.0.0");
    expect(inputs.files.map((f) => f.role)).toEqual(["env", "_corridor.ts"]);
    // The digest depends on content and roles, not on the folder.
    const other = copyCorridor();
    expect(hashInputs(join(other, "corridor-ok.ts"), null, "0.0.0").hash).toBe(inputs.hash);
    expect(hashInputs(join(other, "corridor-ok.ts"), null, "0.0.1").hash).not.toBe(inputs.hash);
  });

  it("editing a module, or a file it imports, gives a new run id and a new job id", async () => {
    const dir = copyCorridor();
    const env = join(dir, "corridor-ok.ts");
    const ids = async () => {
      const r = await resolveTrainConfig({ env, reward: "default", seed: 1, steps: 1000 });
      const [job] = planSweep({ env, rewards: ["default"], learners: ["q-learning"], seeds: [1], steps: 1000 });
      return { run: r.runId, job: job.jobId };
    };
    const a = await ids();
    expect(await ids()).toEqual(a); // same content, same ids
    writeFileSync(join(dir, "_corridor.ts"), readFileSync(join(dir, "_corridor.ts"), "utf8").replace("SLIP = 0.2", "SLIP = 0.25"));
    const b = await ids();
    expect(b.run).not.toBe(a.run);
    expect(b.job).not.toBe(a.job);
    expect(b.run.slice(0, -8)).toBe(a.run.slice(0, -8)); // same prefix, new hash
    writeFileSync(env, readFileSync(env, "utf8") + "\n// edited\n");
    const c = await ids();
    expect(new Set([a.run, b.run, c.run]).size).toBe(3);
    expect(new Set([a.job, b.job, c.job]).size).toBe(3);
  }, 60_000);
});
