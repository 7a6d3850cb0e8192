import type { Command } from "commander";
import { exportModel } from "../../model/format/export.js";
import { loadEnv } from "../../model/registry.js";
import { requireFinite } from "../../sim/finite.js";
import { action, type CliContext } from "../context.js";

export function registerExport(program: Command, ctx: CliContext): void {
  program
    .command("export")
    .description("write an environment as a model file (gapwatch-mdp/1) on stdout")
    .requiredOption("--env <env>", "built-in scenario name, model file or simulator module")
    .action(
      action(ctx, async (opts: { env: string }) => {
        const model = requireFinite(await loadEnv(opts.env), "export");
        ctx.io.out(JSON.stringify(exportModel(model), null, 1) + "\n");
      }),
    );
}
