import type { Command } from "commander";
import { builtinScenarioNames, loadScenario } from "../../model/registry.js";
import { action, type CliContext } from "../context.js";
import { emit, table, useColor } from "../io.js";

export interface EnvListing {
  name: string;
  family: string;
  states: number;
  actions: string[];
  features: string[];
  rewards: string[];
  description: string;
}

/** List the built-in scenarios (callable from the public API too). */
export function listEnvs(): { envs: EnvListing[] } {
  return {
    envs: builtinScenarioNames().map((name) => {
      const { model, scenario } = loadScenario(name);
      return {
        name,
        family: scenario!.family,
        states: model.nStates,
        actions: [...model.actions],
        features: [...model.features],
        rewards: Object.keys(model.variants ?? {}),
        description: scenario!.description,
      };
    }),
  };
}

export function registerEnvs(program: Command, ctx: CliContext): void {
  program
    .command("envs")
    .description("list the built-in scenarios")
    .option("--json", "print one JSON document")
    .action(
      action(ctx, (opts: { json?: boolean }) => {
        const doc = listEnvs();
        emit(ctx.io, Boolean(opts.json), doc, () => {
          const color = useColor(ctx.io);
          const rows = doc.envs.map((e) => [e.name, e.family, e.states, e.actions.length, e.rewards.join(", ")]);
          let text = table(["scenario", "family", "states", "actions", "reward variants"], rows, { color });
          for (const e of doc.envs) text += `\n${e.name}: ${e.description}\n`;
          return text;
        });
      }),
    );
}
