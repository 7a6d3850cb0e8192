export { runCheck, checkSubject, DEFAULT_CHECK_RUNS, DEFAULT_CHECK_SEED, type CheckOptions, type CheckReport } from "./run.js";
export { PROPERTIES, propertiesFor } from "./property-list.js";
export { FREQUENCY_ALPHA, FREQUENCY_SAMPLES } from "./properties/transition-frequencies.js";
export type { PropertyResult, PropertySpec } from "./harness.js";
export { subjectOf, type CheckSubject } from "./subject.js";
export { chiSquareCdf, chiSquareQuantile, chiSquareSurvival, chiSquareTest, regularizedGammaP } from "./chisq.js";
export { logGamma as lnGamma } from "../stats/gamma.js";
