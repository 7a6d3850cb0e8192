import { existsSync, readdirSync, readFileSync, rmSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { memoryIO } from "../../src/cli/io.js";
import { runCli } from "../../src/cli/program.js";
import { tempDirsRemovedAfterAll } from "../helpers/temp-dirs.js";

async function cli(...argv: string[]) {
  const io = memoryIO();
  const code = await runCli(argv, io);
  return { code, out: io.stdout, err: io.stderr };
}

const tempDir = tempDirsRemovedAfterAll();

describe("gapwatch compare / runs", () => {
  it("prints exactly the documented JSON shape, writes comparison.json/.csv and --csv, and lists the runs by filter", async () => {
    const runsDir = tempDir("cli");
    const csv = join(runsDir, "out.csv");
    const r = await cli("compare", "--env", "tests/fixtures/batch/corridor.json", "--rewards", "default,dawdle", "--seed-list", "1,2,3", "--steps", "600", "--workers", "2", "--runs-dir", runsDir, "--csv", csv, "--bootstrap-reps", "300", "--json");
    expect(r.err).toMatch(/comparison: /);
    expect(r.code).toBe(0);
    const doc = JSON.parse(r.out);
    expect(Object.keys(doc)).toEqual(["env", "variants", "ranking", "pairs", "failed"]);
    expect(doc.env).toBe("tests/fixtures/batch/corridor.json");
    for (const v of doc.variants) {
      expect(Object.keys(v)).toEqual(["reward", "runs", "verdicts", "alertRate", "designer", "intent", "failed"]);
      expect(Object.keys(v.verdicts)).toEqual(["aligned", "decoupled", "inconclusive"]);
      expect(Object.keys(v.alertRate)).toEqual(["p", "ci"]);
      for (const s of [v.designer, v.intent]) expect(Object.keys(s)).toEqual(["mean", "median", "iqm", "ci"]);
      expect(v.runs).toBe(3);
    }
    expect(Object.keys(doc.pairs[0])).toEqual(["a", "b", "probabilityOfImprovement", "ci"]);
    // "dawdle" pays per step and never for the goal: it games the corridor; "default" reaches the goal.
    expect(doc.ranking).toEqual(["default", "dawdle"]);
    expect(doc.pairs[0]).toMatchObject({ a: "default", b: "dawdle", probabilityOfImprovement: 1 });
    const dir = r.err.match(/comparison: (.*)/)![1].trim();
    const saved = JSON.parse(readFileSync(join(dir, "comparison.json"), "utf8"));
    expect(saved.variants).toEqual(doc.variants);
    expect(saved.config.seeds).toEqual([1, 2, 3]);
    expect(saved.runDirs).toHaveLength(6);
    expect(readFileSync(csv, "utf8")).toBe(readFileSync(join(dir, "comparison.csv"), "utf8"));
    expect(readFileSync(csv, "utf8").split("\n")[0]).toBe("env,reward,learner,seed,verdict,designer,intent,alerts,runDir");

    const listed = JSON.parse((await cli("runs", "--runs-dir", runsDir, "--reward", "dawdle", "--json")).out);
    expect(listed.runs).toHaveLength(3);
    expect(listed.runs.every((x: { reward: string }) => x.reward === "dawdle")).toBe(true);
    const all = JSON.parse((await cli("runs", "--runs-dir", runsDir, "--json")).out);
    expect(all.runs).toHaveLength(6);
    expect(all.comparisons).toHaveLength(1);
    rmSync(join(runsDir, "index.db"));
    const rebuilt = JSON.parse((await cli("runs", "--runs-dir", runsDir, "--rebuild", "--json")).out);
    expect(rebuilt.rebuilt).toMatchObject({ runs: 6, comparisons: 1 });
    expect(rebuilt.runs).toEqual(all.runs);
    const text = await cli("runs", "--runs-dir", runsDir, "--verdict", "aligned");
    expect(text.code).toBe(0);
    expect(text.out).toMatch(/3 run\(s\)/);
    // The status column: a run without its summary (killed mid-way) reads as interrupted, not finished.
    expect(text.out.split("\n")[0]).toMatch(/\bstatus\b/);
    expect(text.out).toMatch(/\bcomplete\b/);
    rmSync(join(runsDir, all.runs[0].runId, "summary.json"));
    const after = await cli("runs", "--runs-dir", runsDir, "--rebuild");
    expect(after.out).toMatch(/\binterrupted\b/);
  });

  it("--run-timeout stops a run whose module step never returns and reports it as batch.timeout; a bad value exits 2 with one line", async () => {
    const runsDir = tempDir("cli-timeout");
    const r = await cli("compare", "--env", "tests/fixtures/batch/hang-step.ts", "--rewards", "default", "--seed-list", "3", "--steps", "300", "--workers", "1", "--run-timeout", "1", "--runs-dir", runsDir, "--json");
    // The only run failed, so the command exits 2 naming the first failure.
    expect(r.code).toBe(2);
    expect(r.err.trim().split("\n")).toHaveLength(1);
    expect(r.err).toMatch(/batch\.timeout/);
    expect(r.err).toMatch(/hang-step\.ts reward default q-learning seed 3 exceeded the run timeout of 1 s/);
    for (const bad of ["0", "-2", "soon"]) {
      const b = await cli("compare", "--env", "fresh-coat-tug", "--rewards", "fast", "--run-timeout", bad, "--runs-dir", runsDir);
      expect(b.code).toBe(2);
      expect(b.err.trim().split("\n")).toHaveLength(1);
      expect(b.err).toMatch(/--run-timeout needs a positive number of seconds/);
    }
  });

  it("a module whose top-level code never returns: the variant pre-check stops it at the run timeout with one line, before any run (exit 2)", async () => {
    const runsDir = tempDir("cli-hang-load");
    const t0 = Date.now();
    const r = await cli("compare", "--env", "tests/fixtures/batch/hang-load.ts", "--rewards", "default", "--seed-list", "1", "--steps", "100", "--workers", "1", "--run-timeout", "2", "--runs-dir", runsDir);
    expect(r.code).toBe(2);
    expect(r.err.trim().split("\n")).toHaveLength(1);
    expect(r.err).toMatch(/hang-load\.ts/);
    expect(r.err).toMatch(/did not finish within 2 s/);
    // Stopped by the limit, not by the test's own timeout; no run was written.
    expect(Date.now() - t0).toBeLessThan(30_000);
    expect(existsSync(join(runsDir, "index.db")) ? readdirSync(runsDir).filter((d) => d !== "index.db" && !d.startsWith(".")).length : 0).toBe(0);
  });

  it("a broken reward file stops the sweep before any run (one line naming it, exit 2); bad flags exit 2 with one line", async () => {
    const runsDir = tempDir("cli-bad");
    // Every variant is resolved before the first run: nothing is trained or written.
    const r = await cli("compare", "--env", "tests/fixtures/batch/corridor.json", "--rewards", "default,tests/fixtures/batch/bad-reward.json", "--seeds", "2", "--steps", "300", "--workers", "1", "--runs-dir", runsDir, "--bootstrap-reps", "100", "--json");
    expect(r.code).toBe(2);
    expect(r.out).toBe("");
    expect(r.err.trim().split("\n")).toHaveLength(1);
    expect(r.err).toMatch(/\[reward\.[A-Za-z]+\].*bad-reward\.json/);
    expect(readdirSync(runsDir)).toEqual([]);
    const bad = await cli("compare", "--env", "fresh-coat-tug", "--rewards", "fast", "--learners", "nope", "--runs-dir", runsDir);
    expect(bad.code).toBe(2);
    expect(bad.err.trim().split("\n")).toHaveLength(1);
    expect(bad.err).toMatch(/unknown learner "nope"/);
    const q = await cli("compare", "--env", "fresh-coat-tug", "--rewards", "fast", "--queue", "http://x", "--runs-dir", runsDir);
    expect(q.code).toBe(2);
    expect(q.err).toMatch(/redis:\/\//);
    const v = await cli("runs", "--runs-dir", runsDir, "--verdict", "maybe");
    expect(v.code).toBe(2);
    // Reading commands create nothing: a mistyped runs folder is an error, a folder without an index stays without one.
    const typo = join(runsDir, "nope");
    const t = await cli("runs", "--runs-dir", typo);
    expect(t.code).toBe(2);
    expect(t.err).toContain("store.runsDirMissing");
    expect(existsSync(typo)).toBe(false);
    expect((await cli("runs", "--runs-dir", runsDir, "--json")).code).toBe(0);
    expect(existsSync(join(runsDir, "index.db"))).toBe(false);
  });
});
