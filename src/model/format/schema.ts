/**
 * Interchange formats: the model file (`gapwatch-mdp/1`) and the reward file (`gapwatch-reward/1`).
 *
 * Model file, every key required unless marked optional:
 *
 *   {"format": "gapwatch-mdp/1", "name": str, "gamma": num in (0, 1],
 *    "actions": [str, ...],                       // names, unique
 *    "states": int | [str, ...],                  // a count, or one label per state
 *    "start": int | {"<state>": prob, ...},       // one start state, or a distribution summing to 1
 *    "terminal": [int, ...],                      // absorbing states (may be empty)
 *    "features": [str, ...],                      // designer-reward feature names, unique (may be empty)
 *    "transitions": [{"state": int, "action": int,
 *                     "outcomes": [{"next": int, "p": num, "features"?: {str: num}, "intent"?: num}]}],
 *    "rewards"?: {"<variant>": {"weights": {str: num}}},
 *    "horizon"?: int >= 1,                        // default DEFAULT_HORIZON (1000)
 *    "groups"?: {"<state>": str}}                 // group label of (start) states
 *
 * A `<state>` key is a state index written as a decimal string ("3") or a state label. A key that names
 * two different states (the label of one, the index of another) is an error.
 * Every non-terminal (state, action) pair appears exactly once in `transitions`; a terminal state need
 * not appear, and if it does, its outcomes must be self-loops with zero features and zero intent.
 * Outcome probabilities lie in [0, 1] and sum to 1 within 1e-9; a missing outcome feature is 0, a
 * missing intent is 0; every feature key (in outcomes and in reward weights) must be declared.
 *
 * Reward file, strict keys:
 *
 *   {"format": "gapwatch-reward/1", "name": str, "env": str, "weights": {str: num},
 *    "shaping"?: {"potential": str | [num, ...], "scale": num}}
 *
 * Validation is two-layered: a zod schema checks shapes and types, then semantic checks (ranges,
 * references, sums, coverage). Every failure is an `InputError` (exit 2) with a code such as
 * "model.probabilitySum", `where` = "<file> <JSON path>", and a one-line message saying what is wrong
 * and how to fix it. JSON syntax errors give line and column.
 *
 * `exportModel` writes any compiled model as a model file. The format has no place for a shaping
 * term, for named potentials, observations, layouts or descriptions. Shaping is exported honestly as
 * data: a variant with shaping gets its own feature column `shaping.<variant>` holding the shaping term
 * `scale * (gamma * Phi(s') - Phi(s))` (Phi(terminal) = 0, gamma = the model's gamma) of each outcome,
 * weighted 1 in that variant and 0 in all others. The designer reward per outcome is unchanged at the
 * model's gamma; a command that overrides gamma would see the shaping at the exported gamma. Named
 * potentials, observations, layout and description are dropped.
 */
import { z } from "zod";
import { clip, describe, didYouMean, fail, lookup, type Namespace, type Path } from "./json-errors.js";

export const MODEL_FORMAT = "gapwatch-mdp/1";
export const REWARD_FORMAT = "gapwatch-reward/1";
/** Episode step limit of a model file that gives no `horizon`. */
export const DEFAULT_HORIZON = 1000;
/** Prefix of the feature columns that carry an exported variant's shaping term. */
export const SHAPING_FEATURE_PREFIX = "shaping.";

// ---------------------------------------------------------------------------------------------------
// Document types (what a model file or reward file holds after schema validation)

export interface OutcomeDocument {
  next: number;
  p: number;
  features?: Record<string, number>;
  intent?: number;
}
export interface TransitionDocument {
  state: number;
  action: number;
  outcomes: OutcomeDocument[];
}
export interface ModelDocument {
  format: typeof MODEL_FORMAT;
  name: string;
  gamma: number;
  actions: string[];
  states: number | string[];
  start: number | Record<string, number>;
  terminal: number[];
  features: string[];
  transitions: TransitionDocument[];
  rewards?: Record<string, { weights: Record<string, number> }>;
  horizon?: number;
  groups?: Record<string, string>;
}
export interface RewardDocument {
  format: typeof REWARD_FORMAT;
  name: string;
  env: string;
  weights: Record<string, number>;
  shaping?: { potential: string | number[]; scale: number };
}

// ---------------------------------------------------------------------------------------------------
// Schemas

const weightsSchema = z.record(z.string(), z.number());

const outcomeSchema = z.strictObject({
  next: z.number().int(),
  p: z.number(),
  features: weightsSchema.optional(),
  intent: z.number().optional(),
});
const transitionSchema = z.strictObject({
  state: z.number().int(),
  action: z.number().int(),
  outcomes: z.array(outcomeSchema).min(1),
});
export const modelSchema = z.strictObject({
  format: z.literal(MODEL_FORMAT),
  name: z.string().min(1),
  gamma: z.number(),
  actions: z.array(z.string().min(1)).min(1),
  states: z.union([z.number().int().min(1), z.array(z.string()).min(1)]),
  start: z.union([z.number().int(), z.record(z.string(), z.number())]),
  terminal: z.array(z.number().int()),
  features: z.array(z.string().min(1)),
  transitions: z.array(transitionSchema),
  rewards: z.record(z.string(), z.strictObject({ weights: weightsSchema })).optional(),
  horizon: z.number().int().min(1).optional(),
  groups: z.record(z.string(), z.string().min(1)).optional(),
});
export const rewardSchema = z.strictObject({
  format: z.literal(REWARD_FORMAT),
  name: z.string().min(1),
  env: z.string().min(1),
  weights: weightsSchema,
  shaping: z
    .strictObject({
      potential: z.union([z.string().min(1), z.array(z.number())]),
      scale: z.number(),
    })
    .optional(),
});

const MODEL_KEYS = Object.keys(modelSchema.shape);
const TRANSITION_KEYS = Object.keys(transitionSchema.shape);
const OUTCOME_KEYS = Object.keys(outcomeSchema.shape);
const REWARD_KEYS = Object.keys(rewardSchema.shape);

/** A state key written as a canonical decimal index ("0", "17"; not "017" or "+1"). */
export const CANONICAL_INT = /^(0|[1-9][0-9]*)$/;

// ---------------------------------------------------------------------------------------------------
// zod issue -> one InputError

type Issue = z.core.$ZodIssue;

/** Guidance per key name, appended to schema messages. */
const FIX: Record<string, string> = {
  name: "give a non-empty string",
  gamma: "give a discount factor in (0, 1], e.g. 0.99",
  actions: 'give a non-empty list of action names, e.g. ["left", "right"]',
  states: 'give a state count (e.g. 16) or a list of state labels (e.g. ["a", "b"])',
  start: 'give a state index (e.g. 0) or a map from state to probability (e.g. {"0": 0.5, "3": 0.5})',
  terminal: "give a list of state indices (it may be empty)",
  features: 'give a list of feature names (e.g. ["step", "goal"]; it may be empty)',
  transitions: 'give a list of {"state", "action", "outcomes"} entries',
  state: "give a state index (an integer)",
  action: "give an action index (an integer)",
  outcomes: 'give a non-empty list of {"next", "p"} outcomes',
  next: "give the index of the next state (an integer)",
  p: "give a probability, a number in [0, 1]",
  intent: "give a number (or leave the key out for 0)",
  rewards: 'give a map from variant name to {"weights": {...}}',
  weights: 'give a map from feature name to number, e.g. {"step": -1}',
  horizon: "give a positive integer step limit, or leave it out for the default",
  groups: 'give a map from state to group label, e.g. {"0": "north"}',
  env: "give the name of the scenario or model the reward is written for",
  shaping: 'give {"potential": <name or per-state list>, "scale": <number>}',
  potential: "give a potential name provided by the model or a list with one number per state",
  scale: "give a number",
};

function fixFor(path: Path): string {
  for (let k = path.length - 1; k >= 0; k--) {
    const seg = path[k];
    if (typeof seg === "string" && FIX[seg]) {
      // Inside an outcome's "features" map or a "weights" map the value is a number.
      if ((path[k] === "features" || path[k] === "weights") && k < path.length - 1) return "give a finite number";
      return FIX[seg];
    }
  }
  return "see the format description";
}

function knownKeysAt(ns: Namespace, path: Path): readonly string[] {
  if (ns === "reward") return path.length === 0 ? REWARD_KEYS : path[0] === "shaping" ? ["potential", "scale"] : [];
  if (path.length === 0) return MODEL_KEYS;
  if (path[0] === "transitions" && path.length === 2) return TRANSITION_KEYS;
  if (path[0] === "transitions" && path.length === 4) return OUTCOME_KEYS;
  if (path[0] === "rewards" && path.length === 2) return ["weights"];
  return [];
}

function issueToError(ns: Namespace, issue: Issue, data: unknown, where: string, prefix: Path = []): never {
  const path = [...prefix, ...(issue.path as (string | number)[])];
  const actual = lookup(data, path);
  switch (issue.code) {
    case "unrecognized_keys": {
      const key = issue.keys[0];
      const known = knownKeysAt(ns, path);
      const sugg = didYouMean(key, known);
      const fix = sugg !== undefined ? `did you mean ${JSON.stringify(sugg)}? rename it` : `remove it; allowed keys here: ${known.join(", ")}`;
      fail(ns, "unknownKey", where, [...path, key], `unknown key ${JSON.stringify(key)}${issue.keys.length > 1 ? ` (and ${issue.keys.length - 1} more)` : ""}; ${fix}`);
    }
    // falls through (fail never returns)
    case "invalid_union": {
      // If exactly one branch got past the top-level type check, report its deeper issue.
      const deeper = issue.errors.filter((branch) => branch.length > 0 && branch[0].path.length > 0);
      if (deeper.length === 1) issueToError(ns, deeper[0][0], data, where, path);
      fail(ns, "schema", where, path, `unexpected ${describe(actual)}; ${fixFor(path)}`);
    }
    // falls through
    case "invalid_type": {
      if (actual === undefined) fail(ns, "schema", where, path, `required key is missing; ${fixFor(path)}`);
      const expected = issue.expected === "int" ? "an integer" : `${/^[aeiou]/.test(issue.expected) ? "an" : "a"} ${issue.expected}`;
      fail(ns, "schema", where, path, `expected ${expected}, got ${describe(actual)}; ${fixFor(path)}`);
    }
    // falls through
    case "too_small": {
      const what = issue.origin === "array" ? `at least ${issue.minimum} entr${issue.minimum === 1 ? "y" : "ies"}` : issue.origin === "string" ? "a non-empty string" : `a value >= ${issue.minimum}`;
      fail(ns, "schema", where, path, `expected ${what}, got ${describe(actual)}; ${fixFor(path)}`);
    }
    // falls through
    default:
      fail(ns, "schema", where, path, `${issue.message.replace(/^Invalid input: /, "")}, got ${describe(actual)}; ${fixFor(path)}`);
  }
}

export function validate<T>(ns: Namespace, schema: z.ZodType<T>, data: unknown, where: string): T {
  const r = schema.safeParse(data);
  if (r.success) return r.data;
  const issues = [...r.error.issues];
  // A misspelt key usually also shows up as a missing required one; report the misspelling first.
  const misspelt = issues.find((i) => i.code === "unrecognized_keys" && i.keys.some((k) => didYouMean(k, knownKeysAt(ns, i.path as Path)) !== undefined));
  issueToError(ns, misspelt ?? issues[0], data, where);
}

export function checkFormatTag(ns: Namespace, data: unknown, where: string): void {
  if (data === null || typeof data !== "object" || Array.isArray(data)) {
    fail(ns, "schema", where, [], `expected a JSON object, got ${describe(data)}; a ${ns} file is one object starting with {"format": "${ns === "model" ? MODEL_FORMAT : REWARD_FORMAT}", ...}`);
  }
  const want = ns === "model" ? MODEL_FORMAT : REWARD_FORMAT;
  const other = ns === "model" ? REWARD_FORMAT : MODEL_FORMAT;
  const tag = (data as Record<string, unknown>).format;
  if (tag === want) return;
  if (tag === undefined) fail(ns, "format", where, ["format"], `missing format tag; add "format": "${want}"`);
  if (tag === other) {
    fail(ns, "format", where, ["format"], `this is a ${ns === "model" ? "reward" : "model"} file ("${other}"), expected "${want}"; pass it as ${ns === "model" ? "--reward" : "--env"} instead`);
  }
  fail(ns, "format", where, ["format"], `unsupported format tag ${typeof tag === "string" ? JSON.stringify(clip(tag)) : describe(tag)}; expected "${want}" (set "format": "${want}")`);
}
