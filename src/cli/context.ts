import type { Command } from "commander";
import { EXIT, formatError, GapwatchError } from "../errors.js";
import { setLogLevel } from "../util/log.js";
import type { CliIO } from "./io.js";

export interface CliContext {
  io: CliIO;
  /** The process exit code the run will end with. */
  exitCode: number;
}

/** A command module adds one subcommand to the program. */
export type CommandModule = (program: Command, ctx: CliContext) => void;

/**
 * Wrap an async handler: expected failures print one line on stderr and set the exit code
 * (2 bad input, 1 internal); the handler's return value (if a number) is the exit code.
 */
export function action<A extends unknown[]>(ctx: CliContext, fn: (...args: A) => Promise<number | void> | number | void) {
  return async (...args: A): Promise<void> => {
    const opts = args.find((a, i) => i === args.length - 2 && a && typeof a === "object") as { verbose?: boolean } | undefined;
    if (opts?.verbose) setLogLevel("info");
    try {
      const code = await fn(...args);
      ctx.exitCode = typeof code === "number" ? code : EXIT.ok;
    } catch (err) {
      ctx.io.err(formatError(err) + "\n");
      if (!(err instanceof GapwatchError) && ctx.io.env.GAPWATCH_DEBUG) ctx.io.err(String((err as Error)?.stack) + "\n");
      ctx.exitCode = err instanceof GapwatchError ? err.exitCode : EXIT.internal;
    }
  };
}

/** Parse a positive integer option, or throw a one-line input error naming the flag. */
export function intOption(value: string | undefined, flag: string, opts: { min?: number; max?: number; def?: number } = {}): number {
  if (value === undefined) {
    if (opts.def === undefined) throw new GapwatchError("cli.missing", `${flag} is required`, { where: flag });
    return opts.def;
  }
  const n = Number(value);
  const min = opts.min ?? 1;
  if (!Number.isSafeInteger(n) || n < min) throw new GapwatchError("cli.integer", `${flag} expects an integer >= ${min}, got "${value.slice(0, 40)}"`, { where: flag });
  if (opts.max !== undefined && n > opts.max) throw new GapwatchError("cli.integer", `${flag} expects an integer <= ${opts.max}, got ${n}`, { where: flag });
  return n;
}

export function numberOption(value: string | undefined, flag: string, opts: { min?: number; max?: number; def?: number } = {}): number {
  if (value === undefined) {
    if (opts.def === undefined) throw new GapwatchError("cli.missing", `${flag} is required`, { where: flag });
    return opts.def;
  }
  const n = Number(value);
  if (!Number.isFinite(n) || (opts.min !== undefined && n < opts.min) || (opts.max !== undefined && n > opts.max)) {
    const range = `${opts.min ?? "-inf"}..${opts.max ?? "inf"}`;
    throw new GapwatchError("cli.number", `${flag} expects a number in ${range}, got "${value}"`, { where: flag });
  }
  return n;
}
