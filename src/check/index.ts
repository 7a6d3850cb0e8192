export { runCheck, checkSubject, DEFAULT_CHECK_RUNS, DEFAULT_CHECK_SEED, type CheckOptions, type CheckReport } from "./run.js";
export { PROPERTIES, propertiesFor, FREQUENCY_ALPHA, FREQUENCY_SAMPLES, type PropertyResult, type PropertySpec } from "./properties.js";
export { subjectOf, type CheckSubject } from "./subject.js";
export { chiSquareCdf, chiSquareQuantile, chiSquareSurvival, chiSquareTest, regularizedGammaP } from "./chisq.js";
export { logGamma as lnGamma } from "../stats/gamma.js";
