/**
 * The conformance properties of `gapwatch check`, in report order. Each is a fast-check property over
 * generated inputs (a seed and an action sequence, shrunk by fast-check to a minimal failing one), one
 * per file in ./properties/. The precise definitions are in README.md ("Bring your own environment")
 * and restated above each property.
 */
import type { PropertySpec, S } from "./harness.js";
import { determinism } from "./properties/determinism.js";
import { episodesEnd } from "./properties/episodes-end-within-limit.js";
import { featuresDeclared } from "./properties/features-declared-and-finite.js";
import { intentFinite } from "./properties/intent-finite.js";
import { invalidActionRefused } from "./properties/invalid-action-refused.js";
import { observationHidesIntent } from "./properties/observation-hides-intent.js";
import { probabilitiesValid } from "./properties/probabilities-valid.js";
import { resetValid } from "./properties/reset-valid.js";
import { stepAfterTermination } from "./properties/step-after-termination.js";
import { stochasticVariety } from "./properties/stochastic-variety.js";
import { transitionFrequencies } from "./properties/transition-frequencies.js";
import { userProperty } from "./properties/user.js";
import type { CheckSubject } from "./subject.js";

/** The built-in properties, in report order. */
export const PROPERTIES: PropertySpec[] = [
  determinism,
  stochasticVariety,
  resetValid,
  stepAfterTermination,
  invalidActionRefused,
  featuresDeclared,
  intentFinite,
  probabilitiesValid,
  episodesEnd,
  transitionFrequencies,
  observationHidesIntent,
];

/** Built-in properties plus the module's own (`user:<name>`). */
export function propertiesFor(sub: CheckSubject<S>): PropertySpec[] {
  return [...PROPERTIES, ...Object.keys(sub.def.properties ?? {}).map(userProperty)];
}

