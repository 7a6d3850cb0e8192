import { renameSync, rmSync, writeFileSync } from "node:fs";
import { resolve } from "node:path";
import type { Command } from "commander";
import { runExport } from "../../app/export.js";
import { InputError, printableLine } from "../../errors.js";
import { action, type CliContext } from "../context.js";
import { envOf, envOption, layoutOption, jsonOption, maxStatesOf, maxStatesOption } from "../options.js";

export function registerExport(program: Command, ctx: CliContext): void {
  program
    .command("export")
    .description("write an environment as a model file (gapwatch-mdp/1, DRN or compact .gwbin) on stdout or to --out")
    .addOption(envOption())
    .addOption(layoutOption())
    .option("--format <format>", "json (gapwatch-mdp/1, default), drn (the explicit format of probabilistic model checkers; what it cannot carry is said on stderr) or gwbin (compact binary, needs --out)")
    .option("--out <file>", "write the model to this file instead of stdout (required with --format gwbin)")
    .addOption(maxStatesOption())
    .addOption(jsonOption()) // export always prints its JSON document; the flag is accepted like everywhere
    .action(
      action(ctx, async (opts: { env: string; format?: string; maxStates?: string; json?: boolean; out?: string }) => {
        const format = opts.format ?? "json";
        if (format !== "json" && format !== "drn" && format !== "gwbin") throw new InputError("cli.format", `--format expects json, drn or gwbin, got "${format.slice(0, 40)}"`, "--format");
        if (format === "gwbin" && opts.out === undefined) throw new InputError("cli.missing", "--format gwbin writes a binary file: give it with --out <file.gwbin>", "--out");
        if (format === "drn" && opts.json) throw new InputError("cli.conflict", "--json prints the gapwatch-mdp/1 document; drop it with --format drn", "--json");
        const r = await runExport({ env: envOf(opts), format, maxStates: maxStatesOf(opts) });
        for (const w of r.warnings) ctx.io.err(`warning: ${printableLine(w)}\n`);
        if (opts.out === undefined) return void ctx.io.out(r.text);
        // Written next to the target, then renamed: an existing file is never left half-written.
        const file = resolve(ctx.io.cwd, opts.out);
        const tmp = `${file}.${process.pid}.tmp`;
        try {
          writeFileSync(tmp, "bytes" in r && r.bytes ? r.bytes : r.text);
          renameSync(tmp, file);
        } catch (e) {
          rmSync(tmp, { force: true });
          throw new InputError("cli.write", `cannot write the model file (${(e as NodeJS.ErrnoException).code ?? (e as Error).message})`, opts.out);
        }
      }),
    );
}
