/**
 * Resolving `--env` and `--reward`. `--env` is a built-in scenario name (a folder in `envs/`), a path to
 * a model file (`*.json`, format gapwatch-mdp/1) or a path to a simulator module (`*.ts`, `*.js`).
 * `--reward` is a variant name known to the model or a path to a reward file (gapwatch-reward/1).
 * Shared code never branches on a scenario's name: a scenario declares its family and the family
 * compiler turns it into a FiniteModel.
 */
import { existsSync, readdirSync, readFileSync } from "node:fs";
import { join, resolve } from "node:path";
import { InputError } from "../errors.js";
import { envsDir } from "../util/paths.js";
import { loadModelFile, parseRewardFile } from "./format.js";
import { loadModuleEnv } from "../sim/load.js";
import { compileGridScenario } from "./grid.js";
import { compileTrackScenario } from "./track.js";
import { compileBudgetScenario } from "./budget.js";
import { defaultVariantName } from "./reward.js";
import type { FiniteModel, RewardVariant } from "./types.js";

/** The kinds of specification gap a built-in scenario demonstrates. */
export type TrapKind = "repeatable-event" | "omitted-feature" | "speed-proxy" | "mis-scaled-risk" | "shared-budget";

/** scenario.json, common part. Family-specific keys are read by the family compiler. */
export interface ScenarioMeta {
  name: string;
  family: "grid" | "track" | "budget";
  title: string;
  /** One paragraph: the story and the trap it contains. */
  description: string;
  trap: TrapKind;
  /** What the intended-outcome score counts, in words. */
  intent: string;
  /** Variant names that invite gaming, and those that do not. */
  gaming: string[];
  sound: string[];
  [key: string]: unknown;
}

export interface LoadedEnv {
  /** The finite model, when the environment has one (always for scenarios and model files). */
  model?: FiniteModel;
  /** A simulator module's environment (see src/sim), when loaded from a module. */
  simulator?: unknown;
  kind: "scenario" | "file" | "module";
  /** Present for built-in scenarios. */
  scenario?: ScenarioMeta;
  /** The text the user passed, or the scenario name. */
  spec: string;
}

/** A loaded environment that has a finite model. */
export type FiniteEnv = LoadedEnv & { model: FiniteModel };

export function builtinScenarioNames(): string[] {
  const dir = envsDir();
  return readdirSync(dir, { withFileTypes: true })
    .filter((d) => d.isDirectory() && existsSync(join(dir, d.name, "scenario.json")))
    .map((d) => d.name)
    .sort();
}

export function readScenarioMeta(name: string): ScenarioMeta {
  const file = join(envsDir(), name, "scenario.json");
  let meta: ScenarioMeta;
  try {
    meta = JSON.parse(readFileSync(file, "utf8")) as ScenarioMeta;
  } catch (e) {
    throw new InputError("env.scenarioFile", `cannot read scenario: ${(e as Error).message}`, file);
  }
  return { ...meta, name };
}

function loadRewardDir(dir: string): Record<string, RewardVariant> {
  const out: Record<string, RewardVariant> = {};
  if (!existsSync(dir)) return out;
  for (const f of readdirSync(dir).filter((f) => f.endsWith(".json")).sort()) {
    const file = join(dir, f);
    const v = parseRewardFile(readFileSync(file, "utf8"), file);
    out[v.name] = v;
  }
  return out;
}

export function loadScenario(name: string): FiniteEnv {
  const dir = join(envsDir(), name);
  const meta = readScenarioMeta(name);
  const variants = loadRewardDir(join(dir, "rewards"));
  const compiled =
    meta.family === "grid"
      ? compileGridScenario(dir, meta)
      : meta.family === "track"
        ? compileTrackScenario(dir, meta)
        : meta.family === "budget"
          ? compileBudgetScenario(dir, meta)
          : (() => {
              throw new InputError("env.family", `unknown family "${String(meta.family)}", expected grid, track or budget`, join(dir, "scenario.json"));
            })();
  const model: FiniteModel = { ...compiled, variants: { ...(compiled.variants ?? {}), ...variants }, description: meta.description, source: name };
  return { model, kind: "scenario", scenario: meta, spec: name };
}

/** Resolve `--env` synchronously for built-ins and model files. */
export function loadEnvSync(spec: string): FiniteEnv {
  if (/\.json$/i.test(spec)) {
    const file = resolve(spec);
    if (!existsSync(file)) throw new InputError("env.notFound", `model file not found`, spec);
    return { model: loadModelFile(file), kind: "file", spec };
  }
  const names = builtinScenarioNames();
  if (names.includes(spec)) return loadScenario(spec);
  if (/\.(m?[jt]s)$/i.test(spec)) throw new InputError("env.module", `simulator modules load asynchronously; use loadEnv()`, spec);
  throw new InputError(
    "env.unknown",
    `unknown environment "${spec}"; built-in scenarios: ${names.join(", ")}; or pass a path to a model file (.json) or a simulator module (.ts/.js)`,
    "--env",
  );
}

/** Resolve `--env`: built-in scenario, model file, or simulator module. */
export async function loadEnv(spec: string): Promise<LoadedEnv> {
  if (/\.(m?[jt]s)$/i.test(spec)) {
    if (!existsSync(resolve(spec))) throw new InputError("env.notFound", `simulator module not found`, spec);
    return loadModuleEnv(resolve(spec));
  }
  return loadEnvSync(spec);
}

/** Resolve `--reward` against a model: a known variant name, a reward-file path, or the default. */
export function resolveReward(model: FiniteModel, spec?: string): RewardVariant {
  const known = model.variants ?? {};
  if (spec === undefined) {
    const name = defaultVariantName(model);
    if (!name) throw new InputError("reward.none", `${model.name} has no reward variants; pass --reward <file.json>`, "--reward");
    return known[name];
  }
  if (known[spec]) return known[spec];
  if (/\.json$/i.test(spec)) {
    const file = resolve(spec);
    if (!existsSync(file)) throw new InputError("reward.notFound", "reward file not found", spec);
    return parseRewardFile(readFileSync(file, "utf8"), spec);
  }
  const names = Object.keys(known);
  throw new InputError(
    "reward.unknown",
    `unknown reward variant "${spec}" for ${model.name}; known: ${names.length ? names.join(", ") : "none"}; or pass a path to a reward file`,
    "--reward",
  );
}
