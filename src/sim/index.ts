export * from "./define.js";
export { compileModule } from "./compile.js";
export { moduleTabularEnv, type ModuleEnv } from "./env.js";
export { loadModuleEnv, setMaxStates, type SimulatorHandle } from "./load.js";
