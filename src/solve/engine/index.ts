/**
 * The component-wise solving engine: same answers as the textbook solvers of dp.ts (within a proven
 * accuracy), less work. The default exact solver of every command through ../default-solver.ts.
 */
export { evaluateOnStates, evaluatePolicyEngine, evaluatePolicyEngineMany } from "./evaluate.js";
export { planValueIteration, solveValuesEngine, valueIterationEngine, type EngineSolution, type ValuePlan } from "./value-iteration.js";
export { solveOrder, type SolveOrder } from "./order.js";
export { stronglyConnected, transpose, type Components, type CsrGraph } from "./scc.js";
export type { EngineOptions, EngineResult, EngineStats } from "./types.js";
export { startValuesEngine, type StartValues } from "./local.js";
export { evaluateFunctional } from "./functional.js";
