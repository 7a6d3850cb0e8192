export * from "./sweeps.js";
export * from "./evaluation.js";
export * from "./value-iteration.js";
export * from "./policy-iteration.js";
export * from "./policy.js";
export * from "./compare.js";
export * from "./soft.js";
export * from "./default-solver.js";
