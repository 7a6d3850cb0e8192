export * from "./define.js";
export { compileModule, compileModuleStates } from "./compile.js";
export { moduleTabularEnv, type ModuleEnv } from "./env.js";
export { loadSimulator, type SimulatorHandle, type SimulatorLoadOptions, type LoadedSimulator } from "./load.js";
export { Episode, isValidAction, type EpisodeStep, type EpisodeOptions } from "./episode.js";
export { modelSimulator } from "./model-sim.js";
