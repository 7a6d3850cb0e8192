import type { Command } from "commander";
import { runCheckCommand } from "../../app/check.js";
import type { CheckReport } from "../../check/run.js";
import { DEFAULT_CHECK_RUNS, DEFAULT_CHECK_SEED } from "../../check/run.js";
import { EXIT } from "../../errors.js";
import { parseSeed } from "../../rng/rng.js";
import { action, intOption, type CliContext } from "../context.js";
import { emit, paint, table, useColor } from "../io.js";
import { envOf, envOption, layoutOption, jsonOption, maxStatesOf, maxStatesOption } from "../options.js";
import { invocationOf } from "../../util/shell.js";
import { DEFAULT_CHECK_STEPS, MAX_CHECK_HORIZON } from "../../check/harness.js";

export function formatCheck(r: CheckReport, color: boolean): string {
  const mark = (s: string) => (s === "passed" ? paint(color, "green", "PASS") : s === "failed" ? paint(color, "red", "FAIL") : paint(color, "yellow", "SKIP"));
  let text = `${paint(color, "bold", r.env)}  seed ${r.seed}  runs ${r.runs}\n\n`;
  text += table(
    ["property", "result", "runs", "note"],
    r.properties.map((p) => [p.name, mark(p.status), p.runs, p.status === "failed" ? "see below" : (p.note ?? "")]),
    { color },
  );
  for (const p of r.properties.filter((x) => x.status === "failed")) {
    text += `\n${paint(color, "red", `FAIL ${p.name}`)}: ${p.counterexample?.message ?? ""}\n`;
    text += `  counterexample: ${JSON.stringify(p.counterexample?.input)}\n`;
    if (p.replay) text += `  replay: ${p.replay}\n`;
  }
  const failed = r.properties.filter((p) => p.status === "failed").length;
  const passed = r.only !== undefined ? `property ${r.only} ${r.properties[0]?.status ?? "passed"}` : "all properties passed";
  text += failed ? `\n${paint(color, "red", `${failed} propert${failed === 1 ? "y" : "ies"} failed`)}\n` : `\n${paint(color, "green", passed)}\n`;
  return text;
}

export function registerCheck(program: Command, ctx: CliContext): void {
  program
    .command("check")
    .description("property-test an environment: determinism, refusals, finite features and intent, probabilities, step limit, transition frequencies, intent hidden from the learner")
    .addOption(envOption())
    .addOption(layoutOption())
    .option("--runs <n>", `generated cases per property (default ${DEFAULT_CHECK_RUNS})`)
    .option("--seed <seed>", `fast-check seed (default ${DEFAULT_CHECK_SEED})`)
    .option("--property <name>", "run only this property")
    .option("--replay <path>", "replay a counterexample: the fast-check path printed with a failure (needs --property and the same --seed, --runs)")
    .option("--max-steps <n>", `play each padded episode for at most this many steps, when the step limit is higher (default ${DEFAULT_CHECK_STEPS})`)
    .addOption(maxStatesOption())
    .addOption(jsonOption())
    .action(
      action(ctx, async (opts: { env: string; runs?: string; seed?: string; property?: string; replay?: string; maxSteps?: string; maxStates?: string; json?: boolean }) => {
        const runs = intOption(opts.runs, "--runs", { min: 1, def: DEFAULT_CHECK_RUNS });
        const seed = opts.seed === undefined ? DEFAULT_CHECK_SEED : parseSeed(opts.seed);
        const maxSteps = opts.maxSteps === undefined ? undefined : intOption(opts.maxSteps, "--max-steps", { min: 1, max: MAX_CHECK_HORIZON });
        const invocation = invocationOf(ctx.io.env, ctx.io.script);
        const { report, doc } = await runCheckCommand({ env: envOf(opts), runs, seed, property: opts.property, replay: opts.replay, maxSteps, invocation, maxStates: maxStatesOf(opts) });
        emit(ctx.io, Boolean(opts.json), doc, () => formatCheck(report, useColor(ctx.io)));
        return report.passed ? EXIT.ok : EXIT.gate;
      }),
    );
}
