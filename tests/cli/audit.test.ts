/**
 * `gapwatch audit` and `gapwatch pressure` in-process: JSON documents of the shape, --fail-on
 * exit codes, evidence drawn on the map, model files, reference policy files and bad input (exit 2).
 */
import { mkdtempSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { runCli } from "../../src/cli/program.js";
import { memoryIO } from "../../src/cli/io.js";
import { exportModel, formatModelDocument } from "../../src/model/format/export.js";
import { loadScenario } from "../../src/env/index.js";

async function cli(args: string[]) {
  const io = memoryIO();
  const code = await runCli(args, io);
  return { code, out: io.stdout, err: io.stderr };
}

describe("gapwatch audit", () => {
  it("--json prints exactly the documented keys, with loop evidence", async () => {
    const r = await cli(["audit", "--env", "seed-vault-courier", "--reward", "per-scan", "--no-sensitivity", "--json"]);
    expect(r.code).toBe(0);
    const doc = JSON.parse(r.out);
    expect(Object.keys(doc).sort()).toEqual(["env", "findings", "loops", "regret", "regretNorm", "reward"]);
    expect(doc.env).toBe("seed-vault-courier");
    expect(doc.reward).toBe("per-scan");
    for (const f of doc.findings) expect(Object.keys(f).sort()).toEqual(["check", "evidence", "message", "severity"]);
    expect(Object.keys(doc.loops[0]).sort()).toEqual(["actions", "meanDesignerPerStep", "meanIntentPerStep", "states"]);
    expect(doc.findings[0].severity).toBe("critical");
  });

  it("--fail-on critical exits 3 on a gaming variant and 0 on a sound one; --fail-on warning is stricter", async () => {
    expect((await cli(["audit", "--env", "quench-hall-run", "--reward", "light-loss", "--fail-on", "critical", "--no-sensitivity"])).code).toBe(3);
    expect((await cli(["audit", "--env", "quench-hall-run", "--reward", "default", "--fail-on", "critical"])).code).toBe(0);
    expect((await cli(["audit", "--env", "seed-vault-courier", "--reward", "per-scan", "--fail-on", "warning", "--no-sensitivity"])).code).toBe(3);
  });

  it("--max-risk moves the risk verdict: a tolerance above the route's failure probability clears it", async () => {
    const strict = JSON.parse((await cli(["audit", "--env", "quench-hall-run", "--reward", "light-loss", "--no-sensitivity", "--json"])).out);
    const risk = strict.findings.find((f: { check: string }) => f.check === "risk-indifference");
    expect(risk.severity).toBe("critical");
    const p = risk.evidence.failProbability as number;
    const loose = JSON.parse((await cli(["audit", "--env", "quench-hall-run", "--reward", "light-loss", "--no-sensitivity", "--max-risk", String(Math.min(1, p + 0.01)), "--json"])).out);
    expect(loose.findings.find((f: { check: string }) => f.check === "risk-indifference").severity).toBe("info");
  });

  it("human output lists findings by severity and draws the loop on the map, without colour when not a TTY", async () => {
    const r = await cli(["audit", "--env", "seed-vault-courier", "--reward", "per-scan", "--no-sensitivity"]);
    expect(r.code).toBe(0);
    expect(r.out).toMatch(/^seed-vault-courier {2}reward per-scan {2}2 critical/);
    expect(r.out.indexOf("CRITICAL")).toBeLessThan(r.out.indexOf("WARNING"));
    expect(r.out).toContain("#....oo.+.#"); // the two doorway cells of the arch loop
    expect(r.out).not.toContain("\u001b[");
  });

  it("draws the flat-out belt loop on the track strip", async () => {
    const r = await cli(["audit", "--env", "assay-carousel", "--reward", "belt-travel", "--no-sensitivity"]);
    expect(r.out).toMatch(/gates \|/);
    // Flat out at speed 2 on a ring of 24: every second position is visited, all in one direction (12
    // arrows, one per loop state; the designer optimum happens to run the belt backward, |v'| pays alike).
    expect(r.out).toMatch(/loop {2}(«·){12}\n/);
  });

  it("audits a model file exported from a scenario", async () => {
    const m = loadScenario("fresh-coat-tug").model;
    const dir = mkdtempSync(join(tmpdir(), "gapwatch-cli-audit-"));
    const file = join(dir, "fresh-coat-tug.json");
    writeFileSync(file, formatModelDocument(exportModel(m)));
    const r = await cli(["audit", "--env", file, "--reward", "fast", "--fail-on", "critical", "--json"]);
    expect(r.code).toBe(3);
    const checks = JSON.parse(r.out).findings.filter((f: { severity: string }) => f.severity === "critical").map((f: { check: string }) => f.check);
    expect(checks).toContain("regret");
    expect(checks).toContain("regret-by-group");
  });

  it("bad input exits 2 with one line", async () => {
    const a = await cli(["audit", "--env", "seed-vault-courier", "--fail-on", "sometimes"]);
    expect(a.code).toBe(2);
    expect(a.err).toMatch(/--fail-on expects critical or warning/);
    const b = await cli(["audit", "--env", "seed-vault-courier", "--max-risk", "2"]);
    expect(b.code).toBe(2);
    const c = await cli(["audit", "--env", "no-such-place"]);
    expect(c.code).toBe(2);
    expect(c.err.trim().split("\n")).toHaveLength(1);
  });
});

describe("gapwatch audit, wording", () => {
  it("the caution of a static audit speaks of the model and reward, not of learners, seeds or budgets", async () => {
    const r = await cli(["audit", "--env", "quench-hall-run", "--reward", "light-loss"]);
    expect(r.code).toBe(0);
    const caution = r.out.split("\n").find((l) => l.includes("not certification"))!;
    expect(caution).toBeDefined();
    expect(caution).not.toMatch(/learner|seed|budget/);
    // Weight sensitivity names the weights it tried, in plain words.
    expect(r.out).toMatch(/changing the goal weight alone \(now 1; every value from -?[\d.]+ to [\d.]+ was tried, the other weights kept as they are\) never makes/);
    expect(r.out).not.toMatch(/within [\d.]+ of/);
  });

  it("the regret map marks the cells the designer-optimal route gives up, with a legend", async () => {
    // fresh-coat-tug/fast: the tow from the north store crosses the four cells of curing resin (% in
    // envs/fresh-coat-tug/map.txt) that the intended route goes round.
    const r = await cli(["audit", "--env", "fresh-coat-tug", "--reward", "fast", "--no-sensitivity"]);
    const block = r.out.split("CRITICAL regret:")[1].split(/\n(?:CRITICAL|WARNING|INFO)/)[0];
    const map = block.split("\n").filter((l) => /^\s+#/.test(l)).join("\n");
    expect((map.match(/x/g) ?? []).length).toBeGreaterThanOrEqual(4);
    // The plain map has four % cells; the picture covers them all.
    expect(map).not.toContain("%");
    expect(block).toMatch(/x where it gives up intent the intended route keeps/);
  });
});

describe("gapwatch envs", () => {
  it("lists every scenario's features under its story", async () => {
    const j = JSON.parse((await cli(["envs", "--json"])).out) as { envs: { name: string; features: string[] }[] };
    const r = await cli(["envs"]);
    for (const e of j.envs) expect(r.out).toContain(`\n  features: ${e.features.join(", ")}\n`);
  });
});

describe("gapwatch pressure", () => {
  it("--json prints points, peak and onset; a gaming variant has an onset", async () => {
    const r = await cli(["pressure", "--env", "seed-vault-courier", "--reward", "per-scan", "--json"]);
    expect(r.code).toBe(0);
    const doc = JSON.parse(r.out);
    expect(Object.keys(doc).sort()).toEqual(["onset", "peak", "points", "scale"]);
    // The scale: strength 0 is the uniform reference, so the first point scores what random behaviour scores.
    expect(doc.points[0].intent).toBeCloseTo(doc.scale.intent.random, 8);
    expect(doc.points[0].designer).toBeCloseTo(doc.scale.designer.random, 8);
    // 25 = beta 0 plus the 24 log-spaced default strengths (this project's default, src/pressure/curve.ts).
    expect(doc.points.length).toBe(25);
    expect(Object.keys(doc.points[0]).sort()).toEqual(["designer", "intent", "kl", "strength"]);
    expect(typeof doc.onset).toBe("number");
  });

  it("human output draws sparklines and reports no onset on a sound variant", async () => {
    const r = await cli(["pressure", "--env", "fresh-coat-tug", "--reward", "default"]);
    expect(r.code).toBe(0);
    expect(r.out).toMatch(/designer [▁▂▃▄▅▆▇█]+/);
    expect(r.out).toMatch(/intent {3}[▁▂▃▄▅▆▇█]+/);
    expect(r.out).toContain("no onset of over-optimization");
  });

  it("human output names env and reward, the intent optimum, and never an onset before the peak", async () => {
    const r = await cli(["pressure", "--env", "quench-hall-run", "--reward", "light-loss"]);
    expect(r.code).toBe(0);
    expect(r.out.split("\n")[0]).toMatch(/^quench-hall-run {2}reward light-loss$/);
    const j = JSON.parse((await cli(["pressure", "--env", "quench-hall-run", "--reward", "light-loss", "--json"])).out);
    expect(r.out).toContain(`intent optimum ${Number(j.scale.intent.optimum.toFixed(4))}`);
    // Intent first dips below the reference, then peaks: the onset is at or after the peak (issue 15).
    expect(j.onset).toBeGreaterThanOrEqual(j.peak.strength);
    const peakAt = Number(r.out.match(/peak intent .* at strength ([\d.]+)/)![1]);
    const onsetAt = Number(r.out.match(/sets in after strength ([\d.]+)/)![1]);
    expect(onsetAt).toBeGreaterThanOrEqual(peakAt);
  });

  it("sparklines share one 0..1 scale: a nearly flat intent stays low and flat", async () => {
    // fresh-coat-tug/fast: intent stays within 0.03 of random behaviour on the normalized scale at every
    // strength (tests/pressure/curve.test.ts), so its row must not fill the height.
    const r = await cli(["pressure", "--env", "fresh-coat-tug", "--reward", "fast"]);
    const row = r.out.match(/^intent +([▁▂▃▄▅▆▇█]+)/m)![1];
    expect(new Set(row).size).toBeLessThanOrEqual(2);
    expect(row).not.toMatch(/[▄▅▆▇█]/);
  });

  it("--reference reads a policy file; a wrong one exits 2", async () => {
    const m = loadScenario("fresh-coat-tug").model;
    const dir = mkdtempSync(join(tmpdir(), "gapwatch-cli-pressure-"));
    const good = join(dir, "policy.json");
    writeFileSync(good, JSON.stringify({ policy: Array.from({ length: m.nStates }, (_, s) => (m.terminal[s] ? null : "up")) }));
    const r = await cli(["pressure", "--env", "fresh-coat-tug", "--reward", "fast", "--reference", good, "--json"]);
    expect(r.code).toBe(0);
    expect(JSON.parse(r.out).points[0].kl).toBeCloseTo(0, 12);
    const bad = join(dir, "bad.json");
    writeFileSync(bad, JSON.stringify({ policy: ["up"] }));
    const b = await cli(["pressure", "--env", "fresh-coat-tug", "--reference", bad]);
    expect(b.code).toBe(2);
    expect(b.err).toMatch(/expected one per state/);
  });
});
