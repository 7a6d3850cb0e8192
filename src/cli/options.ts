/**
 * Options several commands share, built once so their flags and help texts are the same everywhere,
 * and their parsers (paths resolved against the CLI's working directory, integers checked).
 */
import { Option } from "commander";
import { resolve } from "node:path";
import { DEFAULT_MAX_STATES } from "../sim/define.js";
import { parseLayout, splitLayout, withLayout } from "../env/layout-spec.js";
import { intOption } from "./context.js";
import type { CliIO } from "./io.js";

/** `--env`: what every command that loads an environment accepts. */
export const envOption = (): Option => new Option("--env <env>", "built-in scenario name, model file (.json) or simulator module (.ts/.js)").makeOptionMandatory();

export const rewardOption = (): Option => new Option("--reward <reward>", "reward variant name or reward file (default: the variant named default, else the first)");

export const maxStatesOption = (): Option => new Option("--max-states <n>", `state bound for model files and simulator modules (default ${DEFAULT_MAX_STATES})`);

/** `--max-iters`: the solvers' iteration cap (value-iteration sweeps; policy improvements near gamma = 1). */
export const maxItersOption = (): Option =>
  new Option("--max-iters <n>", "cap on value-iteration sweeps (default grows as 1/(1-gamma)); above gamma 0.999 the solve is policy iteration with exact linear solves and this caps its improvement steps");

/** `--max-iters` as a number, or undefined for the solver's default. */
export function maxItersOf(opts: { maxIters?: string }): number | undefined {
  return opts.maxIters === undefined ? undefined : intOption(opts.maxIters, "--max-iters", { min: 1, max: 100_000_000 });
}

export const jsonOption = (): Option => new Option("--json", "print one JSON document");

/** `--runs-dir`; `role` says what the folder is for in this command. */
export const runsDirOption = (role = "where run directories go"): Option => new Option("--runs-dir <dir>", `${role} (default ./runs)`);

/** `--report [file]`: also write an HTML report, by default at `where`. */
export const reportOption = (what: string, where: string): Option => new Option("--report [file]", `also write ${what} (default ${where})`);

/** `--max-states` as a number (default DEFAULT_MAX_STATES). */
export function maxStatesOf(opts: { maxStates?: string }): number {
  return intOption(opts.maxStates, "--max-states", { min: 1, def: DEFAULT_MAX_STATES });
}

/** `--runs-dir` as an absolute path (default ./runs). */
export function runsDirOf(io: CliIO, opts: { runsDir?: string }): string {
  return resolve(io.cwd, opts.runsDir ?? "runs");
}

/** `--report [file]`: absent, true (the default place), or the file as an absolute path. */
export function reportOf(io: CliIO, report: boolean | string | undefined): boolean | string | undefined {
  return typeof report === "string" ? resolve(io.cwd, report) : report;
}

/** `--layout N`: one layout of a family (a built-in scenario, a folder or list of model files, a module with layouts). */
export const layoutOption = (): Option =>
  new Option("--layout <n>", "layout of the environment family: 0 = the scenario as written (default), N = generated layout N (or the N-th file of a folder or comma list of model files)");

/** `--layouts A-B`: a range of layouts (inclusive; a comma list of ranges is their union). */
export const layoutsOption = (what: string): Option => new Option("--layouts <range>", `${what}, e.g. 1-20 or 0,5-9`);

/** `--env` with `--layout` folded in (`<env>#<N>`, the form run ids and manifests record). */
export function envOf<T extends string | undefined>(opts: { env?: T; layout?: string }): T {
  if (opts.env === undefined || opts.layout === undefined) return opts.env as T;
  return withLayout(splitLayout(opts.env).base, parseLayout(opts.layout)) as T;
}
