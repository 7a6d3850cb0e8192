import type { Command } from "commander";
import { listEnvs } from "../../app/envs.js";
import { action, type CliContext } from "../context.js";
import { emit, table, useColor } from "../io.js";
import { jsonOption } from "../options.js";

export function registerEnvs(program: Command, ctx: CliContext): void {
  program
    .command("envs")
    .description("list the built-in scenarios")
    .addOption(jsonOption())
    .action(
      action(ctx, (opts: { json?: boolean }) => {
        const doc = listEnvs();
        emit(ctx.io, Boolean(opts.json), doc, () => {
          const color = useColor(ctx.io);
          const rows = doc.envs.map((e) => [e.name, e.family, e.states, e.actions.length, e.rewards.join(", ")]);
          let text = table(["scenario", "family", "states", "actions", "reward variants"], rows, { color });
          for (const e of doc.envs) text += `\n${e.name}: ${e.description}\n  features: ${e.features.join(", ")}\n`;
          return text;
        });
      }),
    );
}
