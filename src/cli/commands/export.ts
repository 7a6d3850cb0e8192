import type { Command } from "commander";
import { runExport } from "../../app/export.js";
import { action, type CliContext } from "../context.js";
import { envOption, jsonOption, maxStatesOf, maxStatesOption } from "../options.js";

export function registerExport(program: Command, ctx: CliContext): void {
  program
    .command("export")
    .description("write an environment as a model file (gapwatch-mdp/1) on stdout")
    .addOption(envOption())
    .addOption(maxStatesOption())
    .addOption(jsonOption()) // export always prints its JSON document; the flag is accepted like everywhere
    .action(
      action(ctx, async (opts: { env: string; maxStates?: string; json?: boolean }) => {
        const { doc } = await runExport({ env: opts.env, maxStates: maxStatesOf(opts) });
        ctx.io.out(JSON.stringify(doc, null, 1) + "\n");
      }),
    );
}
