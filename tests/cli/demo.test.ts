// `gapwatch demo`, the main job on the built-in default: Q-learning on every scenario with its gaming and
// its sound variants. The expected labels come from each scenario.json (gaming / sound lists), and the
// rule is the issue's: a gaming variant ends decoupled, a sound one does not.
import { existsSync, mkdtempSync, readFileSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { afterAll, describe, expect, it } from "vitest";
import { memoryIO } from "../../src/cli/io.js";
import { runCli } from "../../src/cli/program.js";
import { builtinScenarioNames, readScenarioMeta } from "../../src/env/index.js";

const dir = mkdtempSync(join(tmpdir(), "gapwatch-demo-"));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe("gapwatch demo", () => {
  it("labels every built-in variant as its scenario does and writes a report per run with --report", async () => {
    const io = memoryIO();
    const code = await runCli(["demo", "--json", "--report", "--runs-dir", dir], io);
    expect(code).toBe(0);
    const doc = JSON.parse(io.stdout) as { runs: { env: string; reward: string; verdict: string; report: string }[] };
    const expected = builtinScenarioNames().flatMap((env) => {
      const m = readScenarioMeta(env);
      return [...m.gaming.map((r) => [env, r, true] as const), ...m.sound.map((r) => [env, r, false] as const)];
    });
    expect(doc.runs).toHaveLength(expected.length);
    for (const [env, reward, gaming] of expected) {
      const run = doc.runs.find((r) => r.env === env && r.reward === reward);
      expect(run, `${env}/${reward}`).toBeDefined();
      if (gaming) expect(run!.verdict, `${env}/${reward}`).toBe("decoupled");
      else expect(run!.verdict, `${env}/${reward}`).not.toBe("decoupled");
      expect(existsSync(run!.report)).toBe(true);
      expect(readFileSync(run!.report, "utf8")).toContain(run!.verdict);
    }
  });
});
