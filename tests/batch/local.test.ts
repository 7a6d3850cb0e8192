import { readFileSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { runCompare, runLocalBatch } from "../../src/batch/compare.js";
import { planSweep } from "../../src/batch/plan.js";
import type { RunOutcome } from "../../src/batch/types.js";
import { openIndex } from "../../src/store/index-db.js";
import { runFingerprints } from "./helpers.js";
import { tempDirsRemovedAfterAll } from "../helpers/temp-dirs.js";

const fresh = tempDirsRemovedAfterAll();

// Small sweep: two fresh-coat-tug variants (one games, one is sound: envs/fresh-coat-tug/scenario.json), 3 seeds.
const SWEEP = { env: "fresh-coat-tug", rewards: ["fast", "default"], learners: ["q-learning"], seeds: [1, 2, 3], steps: 4000, bootstrapSeed: 5, reps: 300 };

describe("local thread pool", () => {
  it("gives identical runs (checkpoints.jsonl bytes, final scores) and statistics with 1 and with 2 workers", async () => {
    const a = fresh("w1");
    const b = fresh("w2");
    const r1 = await runCompare({ ...SWEEP, runsDir: a, workers: 1 });
    const r2 = await runCompare({ ...SWEEP, runsDir: b, workers: 2 });
    const f1 = runFingerprints(a);
    const f2 = runFingerprints(b);
    expect(f1.size).toBe(6);
    expect([...f2.keys()]).toEqual([...f1.keys()]);
    for (const [id, v] of f1) expect(f2.get(id)).toEqual(v);
    expect(JSON.stringify(r2.stats)).toBe(JSON.stringify(r1.stats));
    // The comparison folder is named by the sweep, so both land in the same relative place.
    expect(r2.doc.id).toBe(r1.doc.id);
    // Sanity on the scenario's documented behaviour: the gaming variant decouples, the sound one does not.
    const v = Object.fromEntries(r1.stats.variants.map((x) => [x.reward, x]));
    expect(v.fast.verdicts.decoupled).toBe(3);
    expect(v.default.verdicts.decoupled).toBe(0);
    expect(r1.stats.ranking).toEqual(["default", "fast"]);
    // Every run and the comparison are in the SQLite index, and the files on disk.
    const ix = openIndex(a);
    try {
      expect(ix.listRuns().map((r) => r.runId).sort()).toEqual([...f1.keys()]);
      expect(ix.listComparisons().map((c) => c.id)).toEqual([r1.doc.id]);
    } finally {
      ix.close();
    }
    const doc = JSON.parse(readFileSync(join(r1.dir, "comparison.json"), "utf8"));
    expect(doc.runDirs).toHaveLength(6);
    expect(doc.config.seeds).toEqual([1, 2, 3]);
    expect(readFileSync(join(r1.dir, "comparison.csv"), "utf8").trim().split("\n")).toHaveLength(7);
  });

  it("a batch with a broken simulator module reports that run failed ('module.*') while the other runs complete", async () => {
    const runsDir = fresh("broken");
    const good = planSweep({ env: "fresh-coat-tug", rewards: ["default"], learners: ["q-learning"], seeds: [1, 2], steps: 1000 });
    const bad = planSweep({ env: "tests/fixtures/batch/broken-step.ts", rewards: ["default"], learners: ["q-learning"], seeds: [1], steps: 1000 });
    const seen: RunOutcome[] = [];
    const outcomes = await runLocalBatch([good[0], ...bad, good[1]], runsDir, 2, (o) => seen.push(o));
    expect(seen).toHaveLength(3);
    expect(outcomes.map((o) => o.ok)).toEqual([true, false, true]);
    const failed = outcomes[1];
    if (failed.ok) throw new Error("unreachable");
    expect(failed.error.code).toMatch(/^module\./);
    expect(failed.error.exitCode).toBe(2);
    expect(runFingerprints(runsDir).size).toBe(2);
  });

  it("a run whose module step never returns is stopped by the run timeout ('batch.timeout', one line naming env, reward, seed, limit); the thread is replaced and the other runs complete", async () => {
    const runsDir = fresh("hang");
    const good = planSweep({ env: "fresh-coat-tug", rewards: ["default"], learners: ["q-learning"], seeds: [1, 2], steps: 1000 });
    const hang = planSweep({ env: "tests/fixtures/batch/hang-step.ts", rewards: ["default"], learners: ["q-learning"], seeds: [7], steps: 1000 });
    // One thread, the hanging job first: the good runs can only complete on the thread that replaces the stopped one.
    const outcomes = await runLocalBatch([...hang, ...good], runsDir, 1, () => undefined, { timeoutMs: 1500 });
    expect(outcomes.map((o) => o.ok)).toEqual([false, true, true]);
    const failed = outcomes[0];
    if (failed.ok) throw new Error("unreachable");
    expect(failed.error.code).toBe("batch.timeout");
    expect(failed.error.message.split("\n")).toHaveLength(1);
    expect(failed.error.message).toContain("tests/fixtures/batch/hang-step.ts");
    expect(failed.error.message).toMatch(/reward default q-learning seed 7 exceeded the run timeout of 1\.5 s/);
    expect(runFingerprints(runsDir).size).toBe(2);
  });
});
