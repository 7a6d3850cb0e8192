// `gapwatch check` on step limits it cannot play in full, its one-property summary and the replay
// command it prints: the wait is bounded by runs x --max-steps, an absurd limit is refused before any
// work (exit 2), `--property X` reports X, and the replay line starts the way gapwatch was started.
import { mkdtempSync, rmSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { afterAll, describe, expect, it } from "vitest";
import { runCheck } from "../../src/check/run.js";
import { memoryIO } from "../../src/cli/io.js";
import { runCli } from "../../src/cli/program.js";
import { invocationOf, shellQuote } from "../../src/util/shell.js";

const tmp = mkdtempSync(join(tmpdir(), "gapwatch-check-limits-"));
afterAll(() => rmSync(tmp, { recursive: true, force: true }));

/** A continuing two-state loop (no terminal state): every episode runs to the step limit. */
function loopModel(horizon: number): string {
  const file = join(tmp, `loop-${horizon}.json`);
  const step = (state: number, action: number, next: number) => ({ state, action, outcomes: [{ next, p: 1, features: { lap: 1 }, intent: 1 }] });
  const doc = {
    format: "gapwatch-mdp/1",
    name: "loop",
    gamma: 0.9,
    actions: ["go", "wait"],
    states: ["a", "b"],
    start: { a: 1 },
    terminal: [],
    features: ["lap"],
    transitions: [step(0, 0, 1), step(0, 1, 0), step(1, 0, 0), step(1, 1, 1)],
    rewards: { default: { weights: { lap: 1 } } },
    horizon,
  };
  writeFileSync(file, JSON.stringify(doc));
  return file;
}

async function cli(argv: string[], env: Record<string, string | undefined> = {}) {
  const io = memoryIO(env);
  const code = await runCli(argv, io);
  return { code, out: io.stdout, err: io.stderr };
}

describe("check: step limits", () => {
  it("a step limit of 2^31 is refused before any work: one line, exit 2", async () => {
    const r = await cli(["check", "--env", loopModel(2 ** 31), "--runs", "5"]);
    expect(r.code).toBe(2);
    expect(r.err.trim().split("\n")).toHaveLength(1);
    expect(r.err).toMatch(/check\.horizon.*2147483648/);
  });

  it("a step limit of 10^7 on a continuing task is played only to the cap, and the note says so", async () => {
    // 10 runs x 10^7 steps would be 10^8 steps; the default cap (10,000 per episode) bounds the work.
    const r = await runCheck(loopModel(10_000_000), { runs: 10, seed: 3, property: "episodes-end-within-limit" });
    const p = r.properties[0];
    expect(p.status).toBe("passed");
    expect(p.note).toMatch(/step limit 10000000 is above the check's cap of 10000 steps/);
    const small = await runCheck(loopModel(10_000_000), { runs: 3, seed: 3, maxSteps: 50, property: "step-after-termination" });
    expect(small.properties[0].status).toBe("passed");
  });

  it("a limit within the cap is still checked exactly: the continuing loop is truncated at step 40", async () => {
    const r = await runCheck(loopModel(40), { runs: 10, seed: 3, maxSteps: 1000, property: "episodes-end-within-limit" });
    expect(r.properties[0].status).toBe("passed");
    expect(r.properties[0].note).toMatch(/continuing task/);
  });
});

describe("check: what it says", () => {
  it("--property X says that X passed, not that all properties passed", async () => {
    const r = await cli(["check", "--env", "quench-hall-run", "--runs", "5", "--property", "determinism"]);
    expect(r.code).toBe(0);
    expect(r.out).toContain("property determinism passed");
    expect(r.out).not.toContain("all properties passed");
  });

  it("the replay line starts with npx gapwatch when started by npm/npx, and works as printed", async () => {
    const env = { npm_command: "exec" };
    const r = await cli(["check", "--env", "tests/fixtures/envs/frequencies-disagree.ts", "--runs", "10", "--seed", "1", "--property", "transition-frequencies"], env);
    expect(r.code).toBe(3);
    expect(r.out).toMatch(/replay: npx gapwatch check --env tests\/fixtures\/envs\/frequencies-disagree.ts --runs 10 --seed 1 --property transition-frequencies --replay \S+/);
  });

  it("invocationOf: npx under npm, the bin by name, else node and the script path (quoted for the shell)", () => {
    expect(invocationOf({ npm_command: "run-script" }, "/x/node_modules/.bin/gapwatch")).toBe("npx gapwatch");
    expect(invocationOf({}, "/usr/local/bin/gapwatch")).toBe("gapwatch");
    expect(invocationOf({}, "/home/a b/gapwatch/dist/src/cli/main.js")).toBe("node '/home/a b/gapwatch/dist/src/cli/main.js'");
    // POSIX shell single quotes (IEEE Std 1003.1, Shell Command Language 2.2.2): a quote is closed, escaped, reopened.
    expect(shellQuote("it's")).toBe("'it'\\''s'");
    expect(shellQuote("12:3:0")).toBe("12:3:0");
  });
});
