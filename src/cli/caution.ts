/**
 * The caution for static results (`solve`, `audit`): exact values on a model, no learner, seed or
 * training budget involved, so the line speaks of the model and the reward only.
 */
export const STATIC_CAUTION =
  "A clean result is evidence, not certification: it covers this reward on this model only, and the model holds only what was put in it. For safety-relevant uses follow your domain's safety standards and licensed practice.";
