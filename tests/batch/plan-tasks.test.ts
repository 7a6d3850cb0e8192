/**
 * Sweeps on a job scheduler (issue 16): `compare --plan` writes the plan, every run is a separate
 * `train --plan --index` process (shuffled, some twice, two at once, one killed), `compare --collect`
 * builds the comparison. The reference is a local `compare` of the same sweep: the statistics must be
 * identical (a run depends only on its config and inputs; aggregation only on the runs).
 */
import { spawn } from "node:child_process";
import { existsSync, mkdtempSync, readdirSync, readFileSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join, resolve } from "node:path";
import { afterAll, describe, expect, it } from "vitest";
import { memoryIO } from "../../src/cli/io.js";
import { runCli } from "../../src/cli/program.js";
import { readPlan } from "../../src/batch/sweep-plan.js";

const root = mkdtempSync(join(tmpdir(), "gapwatch-plan-"));
afterAll(() => rmSync(root, { recursive: true, force: true }));

const MAIN = resolve("src/cli/main.ts");
const SWEEP = ["--env", "fresh-coat-tug", "--rewards", "default,fast", "--seed-list", "1-3", "--steps", "20000", "--bootstrap-reps", "300"];

function task(args: string[], env: Record<string, string> = {}, killAfterMs?: number): Promise<{ code: number | null; signal: NodeJS.Signals | null; stderr: string }> {
  return new Promise((res) => {
    const child = spawn(process.execPath, ["--import", "tsx", MAIN, "train", ...args], { stdio: ["ignore", "ignore", "pipe"], env: { ...process.env, GAPWATCH_LOG: "silent", ...env } });
    let stderr = "";
    child.stderr.on("data", (b: Buffer) => (stderr += b.toString()));
    const timer = killAfterMs === undefined ? undefined : setTimeout(() => child.kill("SIGKILL"), killAfterMs);
    child.on("exit", (code, signal) => {
      clearTimeout(timer);
      res({ code, signal, stderr });
    });
  });
}

describe("plan, array tasks, collect", () => {
  it("gives the statistics of a local compare, whatever order the tasks ran in", async () => {
    const runsDir = join(root, "runs");
    const planFile = join(runsDir, "plan.json");
    const planned = memoryIO();
    expect(await runCli(["compare", ...SWEEP, "--plan", planFile, "--runs-dir", runsDir, "--json"], planned)).toBe(0);
    const plan = readPlan(planFile);
    expect(plan.runs.map((r) => r.index)).toEqual([0, 1, 2, 3, 4, 5]);
    expect(readdirSync(runsDir)).toEqual(["plan.json"]); // nothing ran

    const base = ["--plan", planFile, "--runs-dir", runsDir];
    // One task killed at once (before or while it trains): it must leave no complete run.
    const killed = await task([...base, "--index", "2"], {}, 300);
    expect(killed.signal).toBe("SIGKILL");
    // Shuffled order, two at a time, indices 4 and 1 twice, one index from the Slurm variable.
    const order = [5, 1, 4, 0, 3, 4, 1];
    for (let i = 0; i < order.length; i += 2) {
      const pair = order.slice(i, i + 2).map((ix) => task([...base, "--index", String(ix)]));
      for (const r of await Promise.all(pair)) expect(r.code, r.stderr).toBe(0);
    }
    expect(existsSync(join(runsDir, "index.db"))).toBe(false); // plan tasks never open the index

    // Collect before index 2 ran: reported missing by index, gated with --fail-on missing.
    const partial = memoryIO();
    expect(await runCli(["compare", "--collect", runsDir, "--fail-on", "missing", "--json"], partial)).toBe(3);
    expect(JSON.parse(partial.stdout).missing).toEqual([2]);
    expect(partial.stderr).toMatch(/missing runs \(by plan index\): 2/);

    expect((await task(base, { SLURM_ARRAY_TASK_ID: "2" })).code).toBe(0);
    const runFolders = readdirSync(runsDir).filter((n) => n.startsWith("fresh-coat-tug-"));
    expect(runFolders.sort()).toEqual(plan.runs.map((r) => r.runId).sort()); // one folder per run, even when run twice

    const collected = memoryIO();
    expect(await runCli(["compare", "--collect", runsDir, "--fail-on", "missing,failed", "--json"], collected)).toBe(0);
    const got = JSON.parse(collected.stdout);
    expect(got.missing).toEqual([]);

    const local = memoryIO();
    expect(await runCli(["compare", ...SWEEP, "--runs-dir", join(root, "local"), "--workers", "1", "--json"], local)).toBe(0);
    const { missing: _m, ...stats } = got;
    expect(stats).toEqual(JSON.parse(local.stdout));
    // Same runs, same ids, byte-identical checkpoints.
    for (const r of plan.runs) {
      expect(readFileSync(join(runsDir, r.runId, "checkpoints.jsonl"), "utf8")).toBe(readFileSync(join(root, "local", r.runId, "checkpoints.jsonl"), "utf8"));
    }
    expect(existsSync(join(runsDir, "index.db"))).toBe(true); // collect writes the index
  }, 300_000);

  it("bad input exits 2: an index outside the plan, a plan that is not one", async () => {
    const runsDir = join(root, "bad");
    const planFile = join(runsDir, "plan.json");
    expect(await runCli(["compare", ...SWEEP, "--plan", planFile, "--runs-dir", runsDir], memoryIO())).toBe(0);
    const io = memoryIO();
    expect(await runCli(["train", "--plan", planFile, "--index", "6", "--runs-dir", runsDir], io)).toBe(2);
    expect(io.stderr).toMatch(/outside the plan's runs 0\.\.5/);
    const io2 = memoryIO();
    expect(await runCli(["train", "--plan", join(root, "nope.json"), "--index", "0", "--runs-dir", runsDir], io2)).toBe(2);
  }, 120_000);

  it("train --no-index never creates the index file", async () => {
    const runsDir = join(root, "noindex");
    expect(await runCli(["train", "--env", "fresh-coat-tug", "--steps", "2000", "--runs-dir", runsDir, "--no-index"], memoryIO())).toBe(0);
    expect(existsSync(join(runsDir, "index.db"))).toBe(false);
    expect(readdirSync(runsDir).filter((n) => !n.startsWith(".")).length).toBe(1);
  }, 60_000);
});
