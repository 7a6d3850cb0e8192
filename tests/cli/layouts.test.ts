/**
 * Layouts through the CLI: `--layout 0` changes nothing, a layout is recorded in the run's config and
 * the runs index, and a user-module family (tests/fixtures/families/spill-lanes.ts) works through
 * `retune`, `audit --layouts` and `compare --layouts`. Expected outcomes are read from the fixture's
 * own geometry (`spillOnRoute`: the spill lies in lane 0, the only straight route), not from a solver.
 */
import { readFileSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { memoryIO } from "../../src/cli/io.js";
import { runCli } from "../../src/cli/program.js";
import { openIndex } from "../../src/store/index-db.js";
import { tempDirsRemovedAfterAll } from "../helpers/temp-dirs.js";
import { spillOnRoute } from "../fixtures/families/spill-lanes.js";
import { readScenarioMeta } from "../../src/env/index.js";
import { aisleRoom, layoutRng, readAisleRoomOptions } from "../../src/model/layouts.js";

async function cli(...argv: string[]) {
  const io = memoryIO();
  const code = await runCli(argv, io);
  return { code, out: io.stdout, err: io.stderr };
}
const tempDir = tempDirsRemovedAfterAll();
const FAM = "tests/fixtures/families/spill-lanes.ts";
const range = (a: number, b: number) => Array.from({ length: b - a + 1 }, (_, i) => a + i);

describe("--layout", () => {
  it("layout 0 is the scenario as written: solve --json is byte-identical with and without --layout 0", async () => {
    for (const env of ["fresh-coat-tug", "assay-carousel"]) {
      const a = await cli("solve", "--env", env, "--json");
      const b = await cli("solve", "--env", env, "--layout", "0", "--json");
      expect(b.code).toBe(0);
      expect(b.out).toBe(a.out);
    }
  });
  it("a layout names its model and is refused on a single model file; a bad layout exits 2", async () => {
    const r = await cli("solve", "--env", "kiln-shelf-haul", "--layout", "4", "--json");
    expect(JSON.parse(r.out).env).toBe("kiln-shelf-haul#4");
    expect((await cli("solve", "--env", "tests/fixtures/models/sb-4x4.json", "--layout", "2")).code).toBe(2);
    const bad = await cli("solve", "--env", "kiln-shelf-haul", "--layout", "-1");
    expect(bad.code).toBe(2);
    expect(bad.err).toMatch(/config\.layout|layout/);
  });
  it("a trained run records its layout in the run id's config, the manifest and the runs index", async () => {
    const runsDir = tempDir("layout-train");
    const r = await cli("train", "--env", "kiln-shelf-haul", "--layout", "2", "--reward", "default", "--steps", "400", "--runs-dir", runsDir, "--json");
    expect(r.code).toBe(0);
    const doc = JSON.parse(r.out);
    const manifest = JSON.parse(readFileSync(join(doc.runDir, "manifest.json"), "utf8"));
    expect(manifest.config.env).toBe("kiln-shelf-haul#2");
    const plain = await cli("train", "--env", "kiln-shelf-haul", "--reward", "default", "--steps", "400", "--runs-dir", runsDir, "--json");
    const plainManifest = JSON.parse(readFileSync(join(JSON.parse(plain.out).runDir, "manifest.json"), "utf8"));
    expect(plainManifest.runId).not.toBe(manifest.runId);
    const index = openIndex(runsDir);
    try {
      expect(index.listRuns({ env: "kiln-shelf-haul#2" }).map((x) => x.runId)).toEqual([manifest.runId]);
    } finally {
      index.close();
    }
  });
});

describe("retune on a built-in family", () => {
  it("human table names the likely cause; the report draws the worst layout's map with the route", async () => {
    const runsDir = tempDir("retune-builtin");
    // Three clear-aisle days, read from the generator (where it put each pot), not from a solver.
    const opts = readAisleRoomOptions(readScenarioMeta("kiln-shelf-haul").layouts as Record<string, unknown>, "kiln-shelf-haul");
    const clear = range(1, 40).filter((n) => aisleRoom(opts, layoutRng("kiln-shelf-haul", n)).aislePots.length === 0).slice(0, 3);
    const r = await cli("retune", "--env", "kiln-shelf-haul", "--reward", "aisle-tuned", "--move", "step=-0.1:0,fragile=-2:2", "--tune-on", clear.join(","), "--hold-out", "50-65", "--report", "--runs-dir", runsDir);
    expect(r.code).toBe(0);
    expect(r.out).toMatch(/fragile .* no +yes/);
    expect(r.out).toMatch(/held-out layouts gamed \(regretNorm >= 0\.3\): \d+ of 16/);
    const file = r.err.match(/report: (.*)/)![1].trim();
    expect(file).toBe(join(runsDir, "retune-kiln-shelf-haul.html"));
    const html = readFileSync(file, "utf8");
    expect(html).toContain("data-drawing");
    expect(html).toContain('data-feature="fragile"');
    expect(JSON.parse(readFileSync(file.replace(/\.html$/, ".json"), "utf8")).holdout.layouts).toHaveLength(16);
  });
});

describe("a user-module family through retune, audit --layouts, compare --layouts", () => {
  const clear = range(0, 12).filter((n) => !spillOnRoute(n)).slice(0, 3);
  const onRoute = range(1, 12).filter((n) => spillOnRoute(n));
  it("retune on layouts whose spill is off the route: spill unconstrained, held-out layouts with the spill on the route game; exit 3 past --fail-on-holdout; the report has the chart and the worst layout", async () => {
    const runsDir = tempDir("retune");
    const args = ["retune", "--env", FAM, "--reward", "fast", "--move", "spill=-2:2,step=-0.1:0", "--tune-on", clear.join(","), "--hold-out", "20-59"];
    const r = await cli(...args, "--json", "--report", join(runsDir, "r.html"));
    expect(r.code).toBe(0);
    const doc = JSON.parse(r.out);
    expect(Object.keys(doc)).toEqual(["env", "reward", "tuned", "search", "tuning", "holdout", "features", "diagnosis", "report"]);
    expect(Object.keys(doc.holdout)).toEqual(["layouts", "regretNorm", "gaming", "gamingRate", "gamingAt", "ci", "worst"]);
    const spill = doc.features.find((f: { name: string }) => f.name === "spill");
    expect(spill).toMatchObject({ constrained: false, likelyCause: true, interval: [null, expect.any(Number)] });
    const gamed = doc.holdout.layouts.filter((_: number, i: number) => doc.holdout.regretNorm[i] >= 0.3);
    expect(gamed.length).toBeGreaterThan(0);
    for (const n of gamed) expect(spillOnRoute(n)).toBe(true);
    const html = readFileSync(join(runsDir, "r.html"), "utf8");
    expect(html).toContain('data-chart="holdout-regret"');
    expect(html).toContain(`Layout ${doc.holdout.worst.layout}: regretNorm`);
    expect(html).not.toMatch(/<script(?! type="application\/json")/);
    const gate = await cli(...args, "--fail-on-holdout", "0.05");
    expect(gate.code).toBe(3);
    expect(gate.out).toMatch(/likely cause/);
    // Adding one layout with the spill on the route constrains it; nothing games.
    const fixed = JSON.parse((await cli("retune", "--env", FAM, "--reward", "fast", "--move", "spill=-2:2", "--tune-on", [...clear, onRoute[0]].join(","), "--hold-out", "20-59", "--json")).out);
    expect(fixed.features[0].constrained).toBe(true);
    expect(fixed.holdout.gaming).toBe(0);
    // Overlapping tuning and held-out layouts are refused.
    const overlap = await cli("retune", "--env", FAM, "--move", "spill=-2:2", "--tune-on", "1-5", "--hold-out", "5-9");
    expect(overlap.code).toBe(2);
    expect(overlap.err).toMatch(/disjoint/);
  });

  it("every layout of the module family passes gapwatch check", async () => {
    for (const n of [0, 2, 3, 7]) {
      const r = await cli("check", "--env", FAM, "--layout", String(n), "--runs", "10", "--json");
      expect(r.code, `layout ${n}: ${r.err}`).toBe(0);
    }
  });

  it("audit --layouts counts the layouts with a critical finding: those with the spill on the route", async () => {
    const r = await cli("audit", "--env", FAM, "--reward", "fast", "--layouts", "1-12", "--no-sensitivity", "--json");
    expect(r.code).toBe(0);
    const doc = JSON.parse(r.out);
    expect(doc.perLayout.filter((x: { critical: number }) => x.critical > 0).map((x: { layout: number }) => x.layout)).toEqual(onRoute);
    expect(doc.critical).toBe(onRoute.length);
    expect(onRoute).toContain(doc.worst.layout);
    const careful = JSON.parse((await cli("audit", "--env", FAM, "--reward", "careful", "--layouts", "1-12", "--no-sensitivity", "--json")).out);
    expect(careful.critical).toBe(0);
  });

  it("compare --layouts pairs the variants on the same layouts (rows = layouts, one training seed)", async () => {
    const runsDir = tempDir("compare-layouts");
    const r = await cli("compare", "--env", FAM, "--rewards", "fast,careful", "--layouts", "1-3", "--steps", "300", "--workers", "1", "--runs-dir", runsDir, "--bootstrap-reps", "200", "--json");
    expect(r.code).toBe(0);
    const dir = r.err.match(/comparison: (.*)/)![1].trim();
    const saved = JSON.parse(readFileSync(join(dir, "comparison.json"), "utf8"));
    expect(saved.config.seeds).toEqual([1, 2, 3]);
    expect(saved.config.layoutSeed).toBe(1);
    expect(saved.runDirs).toHaveLength(6);
    for (const d of saved.runDirs) {
      const m = JSON.parse(readFileSync(join(d.runDir, "manifest.json"), "utf8"));
      expect(m.config.env).toBe(`${FAM}#${d.seed}`);
      expect(m.config.seed).toBe(1);
    }
    const both = await cli("compare", "--env", FAM, "--rewards", "fast", "--layouts", "1-3", "--seeds", "4", "--runs-dir", runsDir);
    expect(both.code).toBe(2);
  });
});
