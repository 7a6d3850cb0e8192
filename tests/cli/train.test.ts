import { mkdtempSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { afterAll, describe, expect, it } from "vitest";
import { memoryIO } from "../../src/cli/io.js";
import { runCli } from "../../src/cli/program.js";

const runs = mkdtempSync(join(tmpdir(), "gapwatch-cli-train-"));
afterAll(() => rmSync(runs, { recursive: true, force: true }));

describe("gapwatch train", () => {
  it("prints the documented --json shape", async () => {
    const io = memoryIO();
    const code = await runCli(["train", "--env", "fresh-coat-tug", "--reward", "default", "--seed", "3", "--runs-dir", runs, "--json"], io);
    expect(code).toBe(0);
    const doc = JSON.parse(io.stdout);
    expect(Object.keys(doc)).toEqual(expect.arrayContaining(["runDir", "env", "reward", "learner", "seed", "verdict", "checkpoints", "alerts"]));
    expect(doc).toMatchObject({ env: "fresh-coat-tug", reward: "default", learner: "q-learning", seed: 3, verdict: "aligned", alerts: [] });
    expect(doc.checkpoints).toHaveLength(20);
    expect(Object.keys(doc.checkpoints[0])).toEqual(expect.arrayContaining(["step", "designer", "intent", "designerNorm", "intentNorm"]));
    expect(doc.runDir.startsWith(runs)).toBe(true);
  });

  it("exits 3 with --fail-on-alert on a gaming variant, 0 without it", async () => {
    const args = ["train", "--env", "seed-vault-courier", "--reward", "per-scan", "--runs-dir", runs, "--json"];
    const gated = memoryIO();
    expect(await runCli([...args, "--fail-on-alert"], gated)).toBe(3);
    const doc = JSON.parse(gated.stdout);
    expect(doc.verdict).toBe("decoupled");
    expect(doc.alerts[0]).toMatchObject({ kind: "proxy-saturated" });
    expect(await runCli(args, memoryIO())).toBe(0);
  });

  it("prints a text summary with both sparklines and the caution line", async () => {
    const io = memoryIO();
    expect(await runCli(["train", "--env", "quench-hall-run", "--reward", "light-loss", "--runs-dir", runs], io)).toBe(0);
    expect(io.stdout).toMatch(/verdict: decoupled/);
    expect(io.stdout).toMatch(/designer\s+[▁▂▃▄▅▆▇█]{20}/);
    expect(io.stdout).toMatch(/intent\s+[▁▂▃▄▅▆▇█]{20}/);
    expect(io.stdout).toMatch(/evidence, not certification/);
  });

  for (const [flag, value, code] of [
    ["--env", "no-such-env", "env.unknown"],
    ["--reward", "no-such-reward", "reward.unknown"],
    ["--learner", "no-such-learner", "config.learner"],
  ] as const) {
    it(`exits 2 with one line for an unknown ${flag.slice(2)}`, async () => {
      const io = memoryIO();
      const args = ["train", "--env", "fresh-coat-tug", "--runs-dir", runs];
      const i = args.indexOf(flag);
      if (i >= 0) args[i + 1] = value;
      else args.push(flag, value);
      expect(await runCli(args, io)).toBe(2);
      expect(io.stdout).toBe("");
      expect(io.stderr.trim().split("\n")).toHaveLength(1);
      expect(io.stderr).toContain(`[${code}]`);
    });
  }
});
