/**
 * The common part of a built-in scenario's `scenario.json`: what the family compilers (grid.ts,
 * track.ts) read besides their own keys, and what the scenario resolver (src/env) hands to commands.
 */

/** The kinds of specification gap a built-in scenario demonstrates. */
export type TrapKind = "repeatable-event" | "omitted-feature" | "speed-proxy" | "mis-scaled-risk" | "shared-budget";

/** scenario.json, common part. Family-specific keys are read by the family compiler. */
export interface ScenarioMeta {
  name: string;
  family: "grid" | "track" | "budget";
  title: string;
  /** One paragraph: the story and the trap it contains. */
  description: string;
  trap: TrapKind;
  /** What the intended-outcome score counts, in words. */
  intent: string;
  /** Variant names that invite gaming, and those that do not. */
  gaming: string[];
  sound: string[];
  [key: string]: unknown;
}
