/**
 * Resolving `--env` and `--reward`. `--env` is a built-in scenario name (a folder in `envs/`), a path to
 * a model file (`*.json`, format gapwatch-mdp/1; `*.gwbin`, its compact binary companion) or a path
 * to a simulator module (`*.ts`, `*.js`).
 * `--reward` is a variant name known to the model or a path to a reward file (gapwatch-reward/1).
 * `loadFiniteVariant` is the sequence every command that works on a finite model runs:
 * load the environment, require its finite model, resolve the reward.
 */
import { existsSync, readdirSync, readFileSync, statSync } from "node:fs";
import { join, resolve } from "node:path";
import { InputError } from "../errors.js";
import { loadDrnFile } from "../model/drn.js";
import { loadModelFile } from "../model/format/model-file.js";
import { loadBinaryModelFile } from "../model/format/binary.js";
import { logger } from "../util/log.js";
import { parseRewardFile } from "../model/format/reward-file.js";
import { checkVariant, defaultVariantName } from "../model/reward.js";
import { clip, didYouMean } from "../model/format/json-errors.js";
import type { FiniteModel, RewardVariant } from "../model/types.js";
import { importModule, loadSimulator, validateDefinition } from "../sim/load.js";
import { builtinScenarioNames, loadScenario } from "./scenarios.js";
import { splitLayout, withLayout } from "./layout-spec.js";
import type { EnvLoadOptions, FiniteEnv, LoadedEnv, ModuleEnv } from "./types.js";
import { ownValue } from "../util/own.js";

/** Is `--env` a simulator module path (`.ts`, `.js`, `.mts`, `.mjs`), with or without a layout? */
export function isModuleSpec(spec: string): boolean {
  return /\.(m?[jt]s)$/i.test(splitLayout(spec).base);
}

/** Resolve `--env` synchronously for built-ins and model files; `<env>#<N>` picks layout N (layout-spec.ts). */
export function loadEnvSync(spec: string, opts: EnvLoadOptions = {}): FiniteEnv {
  const { base, layout } = splitLayout(spec);
  const family = fileFamily(base);
  if (family) {
    // A folder of model files, or a comma list of them, is a family: layout N = the N-th file.
    if (layout >= family.length) throw new InputError("env.layout", `layout ${layout} does not exist: the family has ${family.length} model files (layouts 0..${family.length - 1})`, spec);
    const env = loadEnvSync(family[layout], opts);
    return { ...env, spec } as FiniteEnv;
  }
  if (layout > 0) {
    if (builtinScenarioNames().includes(base)) return loadScenario(base, layout);
    throw new InputError("env.layout", `${base} is one model, not a family: only built-in scenarios, folders or comma lists of model files, and modules with layouts() have layouts`, spec);
  }
  if (/\.json$/i.test(spec)) {
    const file = resolve(spec);
    if (!existsSync(file)) throw new InputError("env.notFound", `model file not found`, spec);
    return { model: loadModelFile(file, { maxStates: opts.maxStates }), kind: "file", spec };
  }
  if (/\.gwbin$/i.test(spec)) {
    // The compact companion of model files (src/model/format/binary.ts), written by export --format gwbin.
    const file = resolve(spec);
    if (!existsSync(file)) throw new InputError("env.notFound", `model file not found`, spec);
    const model = loadBinaryModelFile(file, spec);
    if (opts.maxStates !== undefined && model.nStates > opts.maxStates) {
      throw new InputError("env.tooManyStates", `the model has ${model.nStates} states, more than --max-states ${opts.maxStates}`, spec);
    }
    return { model, kind: "file", spec };
  }
  if (/\.drn$/i.test(spec)) {
    // The explicit format of probabilistic model checkers (src/model/drn.ts): what it cannot carry
    // (per-outcome rewards, reward variants) is said in warnings, logged on stderr.
    const file = resolve(spec);
    if (!existsSync(file)) throw new InputError("env.notFound", `DRN model file not found`, spec);
    const { model, warnings } = loadDrnFile(file);
    if (opts.maxStates !== undefined && model.nStates > opts.maxStates) {
      throw new InputError("env.tooManyStates", `the DRN model has ${model.nStates} states, more than --max-states ${opts.maxStates}`, spec);
    }
    for (const w of warnings) logger().warn({ file: spec }, w);
    return { model, kind: "file", spec, warnings };
  }
  const names = builtinScenarioNames();
  if (names.includes(spec)) return loadScenario(spec);
  if (isModuleSpec(spec)) throw new InputError("env.module", `simulator modules load asynchronously; use loadEnv()`, spec);
  throw new InputError(
    "env.unknown",
    `unknown environment "${spec}"; built-in scenarios: ${names.join(", ")}; or pass a path to a model file (.json, .gwbin, or .drn from a probabilistic model checker) or a simulator module (.ts/.js)`,
    "--env",
  );
}

/** Load a simulator module file as an environment (compiled within `maxStates` when it allows). */
export async function loadModuleEnv(file: string, opts: EnvLoadOptions = {}, layout = 0): Promise<ModuleEnv> {
  const { simulator, model } = await loadSimulator(file, { maxStates: opts.maxStates, layout });
  return { kind: "module", model, simulator, spec: withLayout(file, layout) };
}

/** The model files of a family spec (a folder, or a comma list of .json/.drn files), else null. */
export function fileFamily(base: string): string[] | null {
  if (base.includes(",")) {
    const files = base.split(",").map((f) => f.trim()).filter((f) => f !== "");
    for (const f of files) {
      if (!/\.(json|drn)$/i.test(f)) throw new InputError("env.family", `a list of model files takes .json or .drn files only, got ${JSON.stringify(clip(f))}`, "--env");
    }
    return files;
  }
  const dir = resolve(base);
  if (!/\.(json|drn|m?[jt]s)$/i.test(base) && existsSync(dir) && statSync(dir).isDirectory()) {
    const files = readdirSync(dir).filter((f) => /\.(json|drn)$/i.test(f)).sort().map((f) => join(base, f));
    if (files.length === 0) throw new InputError("env.family", "the folder has no model files (.json, .drn)", base);
    return files;
  }
  return null;
}

/** Resolve `--env`: built-in scenario, model file, or simulator module. */
export async function loadEnv(spec: string, opts: EnvLoadOptions = {}): Promise<LoadedEnv> {
  if (isModuleSpec(spec)) {
    const { base, layout } = splitLayout(spec);
    if (!existsSync(resolve(base))) throw new InputError("env.notFound", `simulator module not found`, base);
    return loadModuleEnv(resolve(base), opts, layout);
  }
  return loadEnvSync(spec, opts);
}

/** Resolve `--reward` against a model: a known variant name, a reward-file path, or the default. */
export function resolveReward(model: FiniteModel, spec?: string): RewardVariant {
  const known = model.variants ?? {};
  if (spec === undefined) {
    const name = defaultVariantName(model);
    if (!name) throw new InputError("reward.none", `${model.name} has no reward variants; pass --reward <file.json>`, "--reward");
    return known[name];
  }
  const named = ownValue(known, spec);
  if (named) return named;
  if (/\.json$/i.test(spec)) {
    const file = resolve(spec);
    if (!existsSync(file)) throw new InputError("reward.notFound", "reward file not found", spec);
    let text: string;
    try {
      text = readFileSync(file, "utf8");
    } catch (e) {
      throw new InputError("reward.read", `cannot read the reward file (${(e as NodeJS.ErrnoException).code ?? (e as Error).message}); pass a reward file`, spec);
    }
    const variant = parseRewardFile(text, spec);
    if (variant.env !== undefined && variant.env !== model.name && variant.env !== splitLayout(model.name).base) {
      throw new InputError(
        "reward.env",
        `this reward is written for ${JSON.stringify(clip(variant.env))}, but the environment is ${JSON.stringify(clip(model.name))}; pass the matching --env, or set "env" in the reward file`,
        `${spec} $.env`,
      );
    }
    checkVariant(model, variant);
    return variant;
  }
  throw unknownVariant(spec, model.name, Object.keys(known));
}

/** The one line for a reward name that is neither a variant of the environment nor a file: with a did-you-mean. */
export function unknownVariant(spec: string, envName: string, names: readonly string[]): InputError {
  const near = didYouMean(spec, names);
  return new InputError(
    "reward.unknown",
    `unknown reward variant "${clip(spec)}" for ${envName}${near ? `; did you mean "${near}"?` : ""}; known: ${names.length ? names.join(", ") : "none"}; or pass a path to a reward file`,
    "--reward",
  );
}

/**
 * The reward variant names a simulator module defines (`rewards` of its definition), read by importing
 * the module without enumerating its states (compiling may not end for a large module).
 */
export async function moduleVariantNames(file: string): Promise<string[]> {
  const def = validateDefinition(await importModule(resolve(file)), file);
  return Object.keys(def.rewards ?? {});
}

/** The finite model of a loaded environment, or a clear error for commands that need one. */
export function requireFinite(env: LoadedEnv, command: string): FiniteModel {
  if (!env.model) {
    throw new InputError("env.noModel", `${command} needs a finite model; this environment does not provide one (declare states or a model)`, env.spec);
  }
  return env.model;
}

export interface FiniteLoadOptions extends EnvLoadOptions {
  /** The command named in the error when the environment has no finite model. */
  command: string;
  /** How to load `--env` (default `loadEnv`; training passes its per-process scenario cache). */
  load?: (spec: string, opts: EnvLoadOptions) => Promise<LoadedEnv>;
}

/** Load `--env` and require its finite model. */
export async function loadFinite(envSpec: string, opts: FiniteLoadOptions): Promise<{ env: FiniteEnv; model: FiniteModel }> {
  const env = await (opts.load ?? loadEnv)(envSpec, { maxStates: opts.maxStates });
  const model = requireFinite(env, opts.command);
  return { env: env as FiniteEnv, model };
}

/** Load `--env`, require a finite model, resolve `--reward` against it. */
export async function loadFiniteVariant(
  envSpec: string,
  rewardSpec: string | undefined,
  opts: FiniteLoadOptions,
): Promise<{ env: FiniteEnv; model: FiniteModel; variant: RewardVariant }> {
  const { env, model } = await loadFinite(envSpec, opts);
  return { env, model, variant: resolveReward(model, rewardSpec) };
}
