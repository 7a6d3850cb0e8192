import { existsSync, rmSync } from "node:fs";
import { join } from "node:path";
import Database from "better-sqlite3";
import { describe, expect, it } from "vitest";
import { indexRun, INDEX_FILE, openIndex } from "../../src/store/index-db.js";
import { readRun } from "../../src/store/run-store.js";
import { runTraining } from "../../src/train/run.js";
import { tempDirsRemovedAfterAll } from "../helpers/temp-dirs.js";

const tempDir = tempDirsRemovedAfterAll();

describe("run index (real SQLite file, better-sqlite3)", () => {
  it("records runs once each, filters them, and rebuilds the same rows from the run directories when index.db is deleted", async () => {
    const runsDir = tempDir("index");
    const results = [];
    for (const reward of ["fast", "default"]) {
      for (const seed of [1, 2]) {
        const r = await runTraining({ env: "fresh-coat-tug", reward, seed, steps: 4000 }, { runsDir, sync: true });
        indexRun(runsDir, r);
        indexRun(runsDir, r); // twice: an upsert, never a duplicate row
        results.push(r);
      }
    }
    const file = join(runsDir, INDEX_FILE);
    expect(existsSync(file)).toBe(true);
    // Read the file with a separate connection: it is a real SQLite database.
    const raw = new Database(file, { readonly: true });
    expect((raw.prepare("SELECT count(*) AS n FROM runs").get() as { n: number }).n).toBe(4);
    raw.close();

    let ix = openIndex(runsDir);
    const all = ix.listRuns();
    expect(all.map((r) => r.runId).sort()).toEqual(results.map((r) => r.runId).sort());
    const fast = ix.listRuns({ reward: "fast" });
    expect(fast).toHaveLength(2);
    for (const row of fast) {
      const r = readRun(row.runDir);
      expect(row.verdict).toBe(r.verdict);
      expect(row.designer).toBe(r.final!.designerNorm);
      expect(row.intent).toBe(r.final!.intentNorm);
      expect(row.alerts).toBe(r.alerts.length);
      expect(row.seed).toBe(r.config.seed);
      expect(row.time).toMatch(/^\d{4}-\d\d-\d\dT/);
    }
    const decoupled = ix.listRuns({ verdict: "decoupled" });
    expect(decoupled.every((r) => r.verdict === "decoupled")).toBe(true);
    expect(ix.listRuns({ env: "no-such-env" })).toEqual([]);
    ix.close();

    rmSync(file);
    rmSync(file + "-wal", { force: true });
    rmSync(file + "-shm", { force: true });
    ix = openIndex(runsDir); // missing -> rebuilt automatically
    expect(ix.listRuns()).toEqual(all);
    expect(ix.rebuild().runs).toBe(4);
    expect(ix.listRuns()).toEqual(all);
    ix.close();
  });
});
