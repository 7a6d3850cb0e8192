// Properties that call a module's own step/transitions/starts outside the episode wrapper check what
// comes back as the wrapper does: a throwing getter or a Promise ends the check with one line naming
// the call and exit 2 (the project's input contract, DEVELOPERS.md), never a counterexample built from
// reading fields of a broken result.
import { describe, expect, it } from "vitest";
import { memoryIO } from "../../src/cli/io.js";
import { runCli } from "../../src/cli/program.js";

async function check(env: string, property: string) {
  const io = memoryIO();
  const code = await runCli(["check", "--env", env, "--runs", "20", "--seed", "3", "--property", property], io);
  return { code, out: io.stdout, err: io.stderr.trimEnd().split("\n") };
}

describe("raw calls of a module's code inside check properties", () => {
  for (const property of ["transition-frequencies", "stochastic-variety"]) {
    it(`${property}: an outcome of transitions() whose getter throws is one line naming the call`, async () => {
      const r = await check("tests/fixtures/envs/transitions-getter-throws.ts", property);
      expect(r.code, r.err.join("\n")).toBe(2);
      expect(r.err).toHaveLength(1);
      expect(r.err[0]).toMatch(/transitions\(.*\) outcome 1 threw: state getter failed/);
    });
  }

  it("step-after-termination: a Promise returned after the end is one line saying step must be synchronous", async () => {
    const r = await check("tests/fixtures/envs/promise-after-end.ts", "step-after-termination");
    expect(r.code, r.err.join("\n")).toBe(2);
    expect(r.err).toHaveLength(1);
    expect(r.err[0]).toMatch(/after termination returned a Promise/);
  });
});
