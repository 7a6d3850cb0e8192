import { InputError } from "../errors.js";
import type { LoadedEnv } from "../model/registry.js";
import type { FiniteModel } from "../model/types.js";

/** The finite model of a loaded environment, or a clear error for commands that need one. */
export function requireFinite(env: LoadedEnv, command: string): FiniteModel {
  if (!env.model) {
    throw new InputError("env.noModel", `${command} needs a finite model; this environment does not provide one (declare states or a model)`, env.spec);
  }
  return env.model;
}
