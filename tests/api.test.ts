// The public entry point: everything a command does is callable from the package itself.
import { readFileSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import * as api from "../src/index.js";

describe("public entry point", () => {
  it("exposes the job of every command", () => {
    for (const name of [
      "defineEnv", "loadEnv", "resolveReward", "solveVariant", "valueIteration", "evaluatePolicy", "runTraining",
      "runCompare", "runAudit", "pressureCurve", "runCheck", "writeReport", "runDemo", "exportModel", "parseModelFile",
      "train", "createRng", "runSolve", "listEnvs", "runAuditCommand", "runPressure", "runExport", "runTrainCommand",
      "runCompareCommand", "runCheckCommand", "runReportCommand", "listRuns",
    ]) {
      expect(typeof (api as Record<string, unknown>)[name], name).toBe("function");
    }
  });
  it("the command line is its own entry point (gapwatch/cli), never loaded by the library", async () => {
    const pkg = JSON.parse(readFileSync(join(import.meta.dirname, "../package.json"), "utf8"));
    expect(pkg.exports["./cli"].default).toBe("./dist/src/cli/program.js");
    const cli = await import("../src/cli/program.js");
    expect(typeof cli.runCli).toBe("function");
    expect("runCli" in api).toBe(false);
  });
  it("solves a built-in scenario through the API the same way as through the CLI", async () => {
    const env = await api.loadEnv("quench-hall-run");
    const r = api.solveVariant(env.model!, api.resolveReward(env.model!, "light-loss"));
    // Issue "Foundation": a gaming variant gives up >= 30% of the achievable intent.
    expect(r.regretNorm).toBeGreaterThanOrEqual(0.3);
  });
});
