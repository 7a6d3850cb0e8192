/**
 * Load a simulator module (`--env ./my-env.ts` or `.js`). TypeScript loads without a build step (tsx).
 * The default export must come from `defineEnv`; it is validated, then compiled to a finite model when
 * it allows (see compile.ts).
 */
import { register } from "node:module";
import { fileURLToPath, pathToFileURL } from "node:url";
import { InputError } from "../errors.js";
import type { FiniteModel } from "../model/types.js";
import { compileModuleStates } from "./compile.js";
import { DEFAULT_MAX_STATES, type EnvDefinition } from "./define.js";

export interface SimulatorHandle {
  def: EnvDefinition<unknown>;
  source: string;
  /** When compiled: the module state behind each model state id. */
  states?: unknown[];
}

export interface SimulatorLoadOptions {
  /** State bound for compiling the module to a finite model (`--max-states`); default DEFAULT_MAX_STATES. */
  maxStates?: number;
  /** Layout of a module family (`layouts(n)`, see define.ts); 0 = the default export itself. */
  layout?: number;
}

/** A loaded simulator module: its handle, and its finite model when it compiled to one. */
export interface LoadedSimulator {
  simulator: SimulatorHandle;
  model?: FiniteModel;
}

/** Running from source (tests, tsx) rather than from the build (dist/*.js). */
const FROM_SOURCE = fileURLToPath(import.meta.url).endsWith(".ts");

/**
 * A module resolution hook mapping the bare specifiers `gapwatch` and `gapwatch/cli` to the running
 * package's own entry points, so a module anywhere on disk (no node_modules near it) can
 * `import { defineEnv } from "gapwatch"`. The hook delegates to the next resolver with the mapped URL,
 * so tsx still compiles the entry when running from source. Inline (a data: URL) so the same text works
 * from the build and from source.
 */
const RESOLVE_HOOK = `
let targets = {};
export function initialize(data) { targets = data; }
export async function resolve(specifier, context, next) {
  const mapped = Object.prototype.hasOwnProperty.call(targets, specifier) ? targets[specifier] : undefined;
  const r = await next(mapped ?? specifier, context);
  // A TypeScript module outside any package that says "type": "module" would otherwise be compiled to
  // CommonJS, whose require() bypasses this hook: simulator modules are ES modules (export default).
  if (!r.format && /^file:[^?#]*\.m?ts(?:[?#]|$)/.test(r.url) && !r.url.includes("/node_modules/")) return { ...r, format: "module" };
  return r;
}
`;
let hookRegistered = false;

/** Register the `gapwatch` resolution hook once per thread. */
function registerPackageResolver(): void {
  if (hookRegistered) return;
  hookRegistered = true;
  const ext = FROM_SOURCE ? "ts" : "js";
  const data = { gapwatch: new URL(`../index.${ext}`, import.meta.url).href, "gapwatch/cli": new URL(`../cli/program.${ext}`, import.meta.url).href };
  register(`data:text/javascript,${encodeURIComponent(RESOLVE_HOOK)}`, { data });
}

export async function importModule(file: string): Promise<unknown> {
  const url = pathToFileURL(file).href;
  try {
    registerPackageResolver();
    // From source the package entry is TypeScript, so .js modules go through tsx as well.
    if (/\.m?ts$/i.test(file) || FROM_SOURCE) {
      const { tsImport } = await import("tsx/esm/api");
      return await tsImport(url, import.meta.url);
    }
    return await import(url);
  } catch (e) {
    throw new InputError("module.load", `cannot load simulator module: ${(e as Error)?.message ?? String(e)}`, file);
  }
}

export function validateDefinition(value: unknown, file: string): EnvDefinition<unknown> {
  const mod = value as { default?: unknown };
  let def = (mod && typeof mod === "object" && "default" in mod ? mod.default : value) as Record<string, unknown> | undefined;
  // tsx may wrap a CommonJS-style default twice.
  if (def && typeof def === "object" && "default" in def && !("step" in def)) def = def.default as Record<string, unknown>;
  const fail = (key: string, msg: string) => {
    throw new InputError("module.contract", `${msg}; export default defineEnv({ name, actions, features, reset, step })`, `${file} default.${key}`);
  };
  if (!def || typeof def !== "object") fail("", "the module has no default export");
  const d = def as Record<string, unknown>;
  if (typeof d.name !== "string" || d.name === "") fail("name", "name must be a non-empty string");
  if (!Array.isArray(d.actions) || d.actions.length === 0 || !d.actions.every((a) => typeof a === "string")) fail("actions", "actions must be a non-empty list of strings");
  if (!Array.isArray(d.features) || !d.features.every((a) => typeof a === "string")) fail("features", "features must be a list of strings");
  if (typeof d.reset !== "function") fail("reset", "reset must be a function (rng) => state");
  if (typeof d.step !== "function") fail("step", "step must be a function (state, action, rng) => { state, features, intent, terminated }");
  if (d.horizon !== undefined && !(Number.isInteger(d.horizon) && (d.horizon as number) > 0)) fail("horizon", "horizon must be a positive integer");
  if (d.gamma !== undefined && !(typeof d.gamma === "number" && d.gamma > 0 && d.gamma <= 1)) fail("gamma", "gamma must be in (0, 1]");
  if (d.ranges !== undefined) {
    const r = d.ranges as Record<string, unknown> | null;
    if (!r || typeof r !== "object") fail("ranges", "ranges must be an object { designer?: { low, high }, intent?: { low, high } }");
    for (const k of ["designer", "intent"]) {
      const v = (r as Record<string, { low?: unknown; high?: unknown } | undefined>)[k];
      if (v === undefined) continue;
      const ok = v && typeof v === "object" && Number.isFinite(v.low) && Number.isFinite(v.high) && v.low !== v.high;
      if (!ok) fail(`ranges.${k}`, "a range needs two different finite numbers { low, high }");
    }
  }
  for (const k of ["key", "observe", "transitions", "starts"]) if (d[k] !== undefined && typeof d[k] !== "function") fail(k, `${k} must be a function`);
  return d as unknown as EnvDefinition<unknown>;
}

/** Import, validate and (when it allows, within `maxStates`) compile a simulator module. */
export async function loadSimulator(file: string, opts: SimulatorLoadOptions = {}): Promise<LoadedSimulator> {
  let def = validateDefinition(await importModule(file), file);
  const layout = opts.layout ?? 0;
  if (layout > 0) {
    const family = def.layouts;
    if (typeof family !== "function") {
      throw new InputError("env.layout", `layout ${layout} asked for, but the module is one environment: add layouts: (n) => defineEnv({...}) to its definition to make it a family`, file);
    }
    def = validateDefinition(family(layout), `${file} layouts(${layout})`);
  }
  const compiled = compileModuleStates(def, { maxStates: opts.maxStates ?? DEFAULT_MAX_STATES, source: file });
  const model = compiled?.model;
  const simulator: SimulatorHandle = { def, source: file, states: compiled?.states };
  // A layout's model is named <name>#<layout>, like the layouts of built-in scenarios.
  return { simulator, model: model ? { ...model, ...(layout > 0 ? { name: `${model.name}#${layout}` } : {}), source: file } : undefined };
}
