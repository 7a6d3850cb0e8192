import { mkdtempSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { memoryIO } from "../../src/cli/io.js";
import { runCli } from "../../src/cli/program.js";
import { builtinScenarioNames, readScenarioMeta } from "../../src/env/index.js";

async function cli(...argv: string[]) {
  const io = memoryIO();
  const code = await runCli(argv, io);
  return { code, out: io.stdout, err: io.stderr };
}

describe("gapwatch envs", () => {
  it("lists the five built-in scenarios as one JSON document", async () => {
    const r = await cli("envs", "--json");
    expect(r.code).toBe(0);
    const doc = JSON.parse(r.out);
    expect(doc.envs.map((e: { name: string }) => e.name).sort()).toEqual(builtinScenarioNames());
    expect(doc.envs.length).toBeGreaterThanOrEqual(5);
    for (const e of doc.envs) {
      expect(Object.keys(e).sort()).toEqual(["actions", "description", "family", "features", "name", "rewards", "states"]);
      expect(e.states).toBeGreaterThan(0);
    }
    const families = new Set(doc.envs.map((e: { family: string }) => e.family));
    expect(families).toEqual(new Set(["grid", "track", "budget"]));
  });
});

describe("gapwatch solve", () => {
  // The project's acceptance rule (issue "Foundation"): gaming variants give up >= 30% of the achievable
  // intent range above random, sound ones <= 2%, computed exactly.
  for (const name of builtinScenarioNames()) {
    const meta = readScenarioMeta(name);
    for (const v of meta.gaming) {
      it(`${name}/${v} (gaming) regretNorm >= 0.30 through the CLI`, async () => {
        const r = await cli("solve", "--env", name, "--reward", v, "--json");
        expect(r.code).toBe(0);
        const doc = JSON.parse(r.out);
        expect(doc.regretNorm).toBeGreaterThanOrEqual(0.3);
        expect(doc.designerOptimal.values).toHaveLength(doc.states);
        expect(doc.intentOptimal.policy).toHaveLength(doc.states);
        expect(doc.regret).toBeCloseTo(doc.intentOptimal.intent - doc.designerOptimal.intent, 12);
      });
    }
    for (const v of meta.sound) {
      it(`${name}/${v} (sound) regretNorm <= 0.02 through the CLI`, async () => {
        const doc = JSON.parse((await cli("solve", "--env", name, "--reward", v, "--json")).out);
        expect(doc.regretNorm).toBeLessThanOrEqual(0.02);
      });
    }
  }

  it("draws the route on the map in human output", async () => {
    const r = await cli("solve", "--env", "fresh-coat-tug");
    expect(r.code).toBe(0);
    expect(r.out).toMatch(/designer-optimal route:/);
    expect(r.out).toMatch(/[↑→↓←]/);
    expect(r.out).toMatch(/evidence, not certification/);
  });

  it("keeps start glyphs visible, draws the route from every start and puts a legend under the maps", async () => {
    // fresh-coat-tug has two start stores, 1 (north) and 2 (south), both in the map text of its scenario.
    const r = await cli("solve", "--env", "fresh-coat-tug", "--reward", "fast");
    expect(r.code).toBe(0);
    const maps = r.out.split(/designer-optimal route:\n|intent-optimal route:\n/).slice(1);
    expect(maps).toHaveLength(2);
    for (const m of maps) {
      const grid = m.split("\n").filter((l) => l.startsWith("#"));
      const text = grid.join("\n");
      expect(text).toContain("1");
      expect(text).toContain("2");
      expect(text).toContain("*");
      // The south store's route: the cell west of 2 carries an arrow (the tow from 2 is drawn too).
      const row = grid.find((l) => l.includes("2"))!;
      expect(row[row.indexOf("2") - 1]).toMatch(/[↑→↓←]/);
    }
    // One legend, under the last map, naming the characters present and the arrows.
    expect(r.out.match(/^legend: /gm)).toHaveLength(1);
    expect(r.out).toMatch(/legend: .*1-9 start with a group.*% fragile.*→ ↑ ↓ ← route/);
    // A share never above 100%: regret of fast is 98.1% here (within the range), and every percentage is <= 100.
    for (const m of r.out.matchAll(/(-?\d+(?:\.\d+)?)%/g)) expect(Math.abs(Number(m[1]))).toBeLessThanOrEqual(100);
  });

  it("solves a hand-written model file of Sutton & Barto's 4x4 gridworld", async () => {
    // Sutton & Barto 2018, Example 4.1: v*(s) = -(steps to the nearest terminal corner) under reward -1, gamma 1.
    const doc = JSON.parse((await cli("solve", "--env", "tests/fixtures/models/sb-4x4.json", "--json")).out);
    // The fixture's states are "T" (both terminal corners) then the book's states 1..14 in row-major order.
    const vstar = doc.designerOptimal.values as number[];
    const expected = [0, -1, -2, -3, -1, -2, -3, -2, -2, -3, -2, -1, -3, -2, -1];
    expect(vstar).toHaveLength(15);
    expected.forEach((v, s) => expect(vstar[s]).toBeCloseTo(v, 9));
    // Start uniform over the 14 non-terminal states: mean of the 14 distances = 28 / 14 = 2.
    expect(doc.designerOptimal.designer).toBeCloseTo(-2, 9);
  });
});

describe("bad input", () => {
  const bad = ["bad-json", "bad-format", "bad-probability-sum", "bad-missing-transition", "bad-unknown-key"];
  for (const f of bad) {
    it(`${f}.json: one line on stderr, exit 2, nothing on stdout`, async () => {
      const r = await cli("solve", "--env", `tests/fixtures/models/${f}.json`, "--json");
      expect(r.code).toBe(2);
      expect(r.out).toBe("");
      expect(r.err.trimEnd().split("\n")).toHaveLength(1);
      expect(r.err).toContain(`${f}.json`);
      expect(r.err).not.toMatch(/\n\s+at /);
    });
  }
  it("an unknown scenario names the choices", async () => {
    const r = await cli("solve", "--env", "nowhere");
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/unknown environment "nowhere"/);
  });
  it("an unknown reward variant names the known ones", async () => {
    const r = await cli("solve", "--env", "quench-hall-run", "--reward", "nope");
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/known: /);
  });
  it("an unknown option gets a hint and exit 2", async () => {
    const r = await cli("solve", "--env", "quench-hall-run", "--rewrd", "x");
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/--reward/);
  });
});

describe("gapwatch export", () => {
  it("exports every scenario as a model file that solves to the same regret", async () => {
    const { mkdtempSync, writeFileSync } = await import("node:fs");
    const { tmpdir } = await import("node:os");
    const { join } = await import("node:path");
    const dir = mkdtempSync(join(tmpdir(), "gw-export-"));
    for (const name of builtinScenarioNames()) {
      const ex = await cli("export", "--env", name);
      expect(ex.code).toBe(0);
      const file = join(dir, `${name}.json`);
      writeFileSync(file, ex.out);
      const meta = readScenarioMeta(name);
      const v = meta.gaming[0];
      const a = JSON.parse((await cli("solve", "--env", name, "--reward", v, "--json")).out);
      const b = JSON.parse((await cli("solve", "--env", file, "--reward", v, "--json")).out);
      expect(b.regret).toBeCloseTo(a.regret, 9);
    }
  });
});

describe("gapwatch export --json", () => {
  it("accepts --json and prints the same model document as without it", async () => {
    const plain = await cli("export", "--env", "quench-hall-run");
    const json = await cli("export", "--env", "quench-hall-run", "--json");
    expect(json.code).toBe(0);
    expect(json.out).toBe(plain.out);
    // The document format is gapwatch-mdp/1 (src/model/format.ts, MODEL_FORMAT).
    expect(JSON.parse(json.out).format).toBe("gapwatch-mdp/1");
  });
});

describe("--max-states on every command that loads an environment", () => {
  // Sutton & Barto (2018), Example 4.1: the 4x4 gridworld has 16 cells, so a bound of 10 states
  // cannot hold it and a bound of 16 can.
  const MODULE = "examples/textbook-4x4.ts";
  const runsDir = mkdtempSync(join(tmpdir(), "gw-max-states-"));
  const extra: Record<string, string[]> = {
    train: ["--steps", "200", "--runs-dir", runsDir],
    compare: ["--rewards", "default", "--seeds", "1", "--workers", "1", "--runs-dir", runsDir],
  };
  for (const cmd of ["solve", "audit", "pressure", "export", "train", "compare"]) {
    it(`${cmd} --max-states 10 refuses the 16-state module with one line (exit 2)`, async () => {
      const r = await cli(cmd, "--env", MODULE, "--max-states", "10", ...(extra[cmd] ?? []));
      expect(r.code).toBe(2);
      expect(r.err.trimEnd().split("\n")).toHaveLength(1);
      // compare reports the first failed run's error.
      expect(r.err).toMatch(/\[module\.tooManyStates\] .*textbook-4x4\.ts: (every run failed; first: )?more than 10 reachable states/);
    });
  }
  it("solve --max-states 16 compiles the same module (16 states)", async () => {
    const r = await cli("solve", "--env", MODULE, "--max-states", "16", "--json");
    expect(r.code).toBe(0);
    expect(JSON.parse(r.out).states).toBe(16);
  });
  it("a bad --max-states value exits 2 with one line", async () => {
    const r = await cli("solve", "--env", MODULE, "--max-states", "0");
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/--max-states expects an integer >= 1/);
  });
});
