import type { Command } from "commander";
import { runExport } from "../../app/export.js";
import { InputError, printableLine } from "../../errors.js";
import { action, type CliContext } from "../context.js";
import { envOf, envOption, layoutOption, jsonOption, maxStatesOf, maxStatesOption } from "../options.js";

export function registerExport(program: Command, ctx: CliContext): void {
  program
    .command("export")
    .description("write an environment as a model file (gapwatch-mdp/1) on stdout")
    .addOption(envOption())
    .addOption(layoutOption())
    .option("--format <format>", "json (gapwatch-mdp/1, default) or drn (the explicit format of probabilistic model checkers; what it cannot carry is said on stderr)")
    .addOption(maxStatesOption())
    .addOption(jsonOption()) // export always prints its JSON document; the flag is accepted like everywhere
    .action(
      action(ctx, async (opts: { env: string; format?: string; maxStates?: string; json?: boolean }) => {
        const format = opts.format ?? "json";
        if (format !== "json" && format !== "drn") throw new InputError("cli.format", `--format expects json or drn, got "${format.slice(0, 40)}"`, "--format");
        if (format === "drn" && opts.json) throw new InputError("cli.conflict", "--json prints the gapwatch-mdp/1 document; drop it with --format drn", "--json");
        const { text, warnings } = await runExport({ env: envOf(opts), format, maxStates: maxStatesOf(opts) });
        for (const w of warnings) ctx.io.err(`warning: ${printableLine(w)}\n`);
        ctx.io.out(text);
      }),
    );
}
