/**
 * Shared pieces of the DRN reader (drn.ts, drn-build.ts) and writer (drn-export.ts): options, results,
 * the label and reward-model names gapwatch gives meaning to, and the parsed form of a state.
 */
import type { FiniteModel } from "./types.js";

export interface DrnParseOptions {
  /** Reward model that holds the intent (default "intent"). */
  intentRewardModel?: string;
  /** Label that marks terminal states (default "terminal"). */
  terminalLabel?: string;
  /** Discount; overrides a `gamma` comment. */
  gamma?: number;
  /** Episode step limit; overrides a `horizon` comment. */
  horizon?: number;
  /** Model name; overrides a `name` comment (default: the file name without `.drn`). */
  name?: string;
}

export interface DrnExportOptions {
  /** Name of the reward model that carries the intent (default "intent"). */
  intentRewardModel?: string;
  /** Label written on terminal states (default "terminal"). */
  terminalLabel?: string;
}

export interface DrnImport {
  model: FiniteModel;
  /** What the file could not say in gapwatch's terms, one sentence each. */
  warnings: string[];
}

export interface DrnExport {
  text: string;
  /** What the export loses, one sentence each. */
  warnings: string[];
}

export const DRN_INTENT = "intent";
export const DRN_TERMINAL = "terminal";
export const DRN_INIT = "init";
export const DRN_GROUP_PREFIX = "group:";
export const DRN_POTENTIAL_PREFIX = "potential.";
export const META = "// gapwatch-drn:";

export interface Choice {
  name: string;
  line: number;
  rewards: number[];
  next: number[];
  prob: number[];
}

export interface StateRec {
  line: number;
  rewards: number[];
  labels: string[];
  name?: string;
  choices: Choice[];
}
