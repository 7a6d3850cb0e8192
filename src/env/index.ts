/** Resolve what the user named: `--env` (scenario, model file, simulator module) and `--reward`. */
export * from "./types.js";
export { builtinScenarioNames, readScenarioMeta, loadScenario, compileScenarioLayout, gridLayoutLines } from "./scenarios.js";
export { splitLayout, withLayout, parseLayout, parseLayoutRange, MAX_LAYOUT, MAX_LAYOUT_RANGE } from "./layout-spec.js";
export { isModuleSpec, loadEnv, loadEnvSync, loadModuleEnv, moduleVariantNames, resolveReward, requireFinite, unknownVariant, loadFinite, fileFamily, loadFiniteVariant, type FiniteLoadOptions } from "./resolve.js";
