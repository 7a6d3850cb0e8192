/** Resolve what the user named: `--env` (scenario, model file, simulator module) and `--reward`. */
export * from "./types.js";
export { builtinScenarioNames, readScenarioMeta, loadScenario } from "./scenarios.js";
export { isModuleSpec, loadEnv, loadEnvSync, loadModuleEnv, moduleVariantNames, resolveReward, requireFinite, unknownVariant, loadFinite, loadFiniteVariant, type FiniteLoadOptions } from "./resolve.js";
