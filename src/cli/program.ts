/**
 * The CLI as a function: `runCli(argv, io)` builds the commander program, runs it and returns the
 * exit code, so tests drive the whole CLI in-process. `main.ts` is the thin process wrapper.
 */
import { Command, CommanderError } from "commander";
import { EXIT } from "../errors.js";
import { packageVersion } from "../util/paths.js";
import { loadCommands } from "./commands/index.js";
import type { CliContext } from "./context.js";
import { processIO, type CliIO } from "./io.js";

/**
 * The commander program with the commands of `argv`: the one it names (its code alone is imported:
 * start-up is mostly module loading), or all of them for help, a bare call or an unknown name.
 */
export async function buildProgram(ctx: CliContext, argv: readonly string[] = []): Promise<Command> {
  const program = new Command();
  program
    .name("gapwatch")
    .description("Does optimizing your reward produce what you meant? Benchmark a candidate reward against a held-out measure of intent.")
    .version(packageVersion(), "-V, --version")
    .showSuggestionAfterError(true)
    .exitOverride()
    .configureOutput({
      writeOut: (s) => ctx.io.out(s),
      writeErr: (s) => ctx.io.err(s),
    });
  for (const register of await loadCommands(argv[0])) register(program, ctx);
  return program;
}

export async function runCli(argv: string[], io: CliIO = processIO()): Promise<number> {
  const ctx: CliContext = { io, exitCode: EXIT.ok };
  const program = await buildProgram(ctx, argv);
  try {
    await program.parseAsync(argv, { from: "user" });
  } catch (err) {
    if (err instanceof CommanderError) {
      if (err.code === "commander.helpDisplayed" || err.code === "commander.version" || err.code === "commander.help") return EXIT.ok;
      return EXIT.badInput;
    }
    throw err;
  }
  return ctx.exitCode;
}
