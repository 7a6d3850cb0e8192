/**
 * What `--env` resolves to. A discriminated union on `kind`: built-in scenarios and model files always
 * carry a finite model; a simulator module carries its typed handle and a model only when it compiled
 * to one (within `--max-states`).
 */
import type { ScenarioMeta } from "../model/scenario.js";
import type { FiniteModel } from "../model/types.js";
import type { SimulatorHandle } from "../sim/load.js";

/** A built-in scenario (a folder in `envs/`). */
export interface ScenarioEnv {
  kind: "scenario";
  model: FiniteModel;
  scenario: ScenarioMeta;
  /** The scenario name. */
  spec: string;
}

/** A model file (`*.json`, format gapwatch-mdp/1). */
export interface ModelFileEnv {
  kind: "file";
  model: FiniteModel;
  /** What a DRN file could not carry (src/model/drn.ts), when the file was one. */
  warnings?: string[];
  /** The path the user passed. */
  spec: string;
}

/** A simulator module (`*.ts`, `*.js`); see src/sim. */
export interface ModuleEnv {
  kind: "module";
  /** Present when the module compiled to a finite model. */
  model?: FiniteModel;
  simulator: SimulatorHandle;
  /** The module's absolute path. */
  spec: string;
}

export type LoadedEnv = ScenarioEnv | ModelFileEnv | ModuleEnv;

/** A loaded environment that has a finite model. */
export type FiniteEnv = LoadedEnv & { model: FiniteModel };

export interface EnvLoadOptions {
  /** State bound when compiling a simulator module (`--max-states`); default DEFAULT_MAX_STATES. */
  maxStates?: number;
}
