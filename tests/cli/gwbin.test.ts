// The compact model file through the command line: every built-in exported with
// `export --format gwbin --out f.gwbin` and solved back with `--env f.gwbin` gives exactly the values of
// the built-in itself (same arrays, same arithmetic: equality, no tolerance); damaged files exit 2
// with one line.
import { readFileSync, writeFileSync } from "node:fs";
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

describe("compact model files on the command line", () => {
  for (const env of builtinScenarioNames()) {
    it(`${env}: export --format gwbin, then solve --env file.gwbin with each variant, identical values`, async () => {
      const file = join(fresh("gwbin"), `${env}.gwbin`);
      const exported = await cli("export", "--env", env, "--format", "gwbin", "--out", file);
      expect(exported.code, exported.err).toBe(0);
      expect(readFileSync(file).subarray(0, 8).toString("latin1")).toBe("gapwatch");
      const meta = readScenarioMeta(env);
      for (const variant of [...meta.gaming, ...meta.sound]) {
        const a = JSON.parse((await cli("solve", "--env", env, "--reward", variant, "--json")).out);
        const r = await cli("solve", "--env", file, "--reward", variant, "--json");
        expect(r.code, r.err).toBe(0);
        const b = JSON.parse(r.out);
        expect(b.designerOptimal).toEqual(a.designerOptimal);
        expect(b.intentOptimal).toEqual(a.intentOptimal);
      }
    });
  }

  it("gwbin needs --out; a truncated or foreign .gwbin is one line, exit 2", async () => {
    const dir = fresh("gwbin-bad");
    const noOut = await cli("export", "--env", "quench-hall-run", "--format", "gwbin");
    expect(noOut.code).toBe(2);
    expect(noOut.err).toMatch(/--out/);
    const file = join(dir, "q.gwbin");
    expect((await cli("export", "--env", "quench-hall-run", "--format", "gwbin", "--out", file)).code).toBe(0);
    const cut = join(dir, "cut.gwbin");
    const bytes = readFileSync(file);
    writeFileSync(cut, bytes.subarray(0, bytes.length - 20));
    const r = await cli("solve", "--env", cut);
    expect(r.code).toBe(2);
    expect(r.err.trim().split("\n")).toHaveLength(1);
    expect(r.err).toMatch(/cut\.gwbin.*truncated: section ".+" at byte \d+ needs bytes/);
    const foreign = join(dir, "f.gwbin");
    writeFileSync(foreign, "{}");
    const f = await cli("solve", "--env", foreign);
    expect(f.code).toBe(2);
    expect(f.err).toMatch(/f\.gwbin.*does not start with the 8 bytes "gapwatch"/);
  });
});
