/**
 * Every subcommand, in help order, each loaded on demand: a run of one command imports that command's
 * code only (start-up time is module loading), help and an unknown command load them all. Add a
 * command: its handler in src/app/<name>.ts, its flags in src/cli/commands/<name>.ts, listed here.
 */
import type { CommandModule } from "../context.js";

const LOADERS = new Map<string, () => Promise<CommandModule>>([
  ["demo", async () => (await import("./demo.js")).registerDemo],
  ["envs", async () => (await import("./envs.js")).registerEnvs],
  ["solve", async () => (await import("./solve.js")).registerSolve],
  ["audit", async () => (await import("./audit.js")).registerAudit],
  ["pressure", async () => (await import("./pressure.js")).registerPressure],
  ["train", async () => (await import("./train.js")).registerTrain],
  ["ingest", async () => (await import("./ingest.js")).registerIngest],
  ["compare", async () => (await import("./compare.js")).registerCompare],
  ["worker", async () => (await import("./worker.js")).registerWorker],
  ["runs", async () => (await import("./runs.js")).registerRuns],
  ["report", async () => (await import("./report.js")).registerReport],
  ["check", async () => (await import("./check.js")).registerCheck],
  ["export", async () => (await import("./export.js")).registerExport],
  ["retune", async () => (await import("./retune.js")).registerRetune],
]);

/** The command names, in help order. */
export const COMMAND_NAMES: readonly string[] = [...LOADERS.keys()];

/** The register functions of `name` alone when it is a command, else of every command (help order). */
export async function loadCommands(name?: string): Promise<CommandModule[]> {
  const one = name === undefined ? undefined : LOADERS.get(name);
  return one ? [await one()] : Promise.all([...LOADERS.values()].map((load) => load()));
}
