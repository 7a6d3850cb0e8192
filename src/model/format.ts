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
import { readFileSync } from "node:fs";
import { z } from "zod";
import { InputError } from "../errors.js";
import { ModelBuilder, PROB_TOLERANCE } from "./builder.js";
import { resolvePotential, checkVariant } from "./reward.js";
import type { FiniteModel, RewardVariant } from "./types.js";

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
const modelSchema = z.strictObject({
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
const rewardSchema = z.strictObject({
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

type Path = readonly (string | number)[];
type Namespace = "model" | "reward";

// ---------------------------------------------------------------------------------------------------
// Small pure helpers

const IDENT = /^[A-Za-z_$][A-Za-z0-9_$]*$/;

/** A JSON path in the `$.a.b[3]["odd key"]` notation. */
export function jsonPath(path: Path): string {
  let out = "$";
  for (const seg of path) {
    if (typeof seg === "number") out += `[${seg}]`;
    else if (IDENT.test(seg)) out += `.${seg}`;
    else out += `[${JSON.stringify(seg)}]`;
  }
  return out;
}

/** Edit distance counting an adjacent transposition as one edit (optimal string alignment). */
function editDistance(a: string, b: string): number {
  const m = a.length;
  const n = b.length;
  const d: number[][] = Array.from({ length: m + 1 }, (_, i) => Array.from({ length: n + 1 }, (_, j) => (i === 0 ? j : j === 0 ? i : 0)));
  for (let i = 1; i <= m; i++) {
    for (let j = 1; j <= n; j++) {
      d[i][j] = Math.min(d[i - 1][j] + 1, d[i][j - 1] + 1, d[i - 1][j - 1] + (a[i - 1] === b[j - 1] ? 0 : 1));
      if (i > 1 && j > 1 && a[i - 1] === b[j - 2] && a[i - 2] === b[j - 1]) d[i][j] = Math.min(d[i][j], d[i - 2][j - 2] + 1);
    }
  }
  return d[m][n];
}

/**
 * The closest candidate to `word` when it is a near miss: same up to case, a few edits away (about one
 * per three characters), or else the longest candidate that `word` starts with ("prob" -> "p").
 */
export function didYouMean(word: string, candidates: readonly string[]): string | undefined {
  let best: string | undefined;
  let bestD = Infinity;
  const w = word.toLowerCase();
  for (const c of candidates) {
    const d = editDistance(w, c.toLowerCase());
    if (d < bestD) {
      bestD = d;
      best = c;
    }
  }
  const limit = Math.max(1, Math.min(3, Math.floor(word.length / 3)));
  if (best !== undefined && bestD <= limit) return best;
  let prefix: string | undefined;
  for (const c of candidates) if (c.length > 0 && w.startsWith(c.toLowerCase()) && (prefix === undefined || c.length > prefix.length)) prefix = c;
  return prefix;
}

function hint(word: string, candidates: readonly string[]): string {
  const s = didYouMean(word, candidates);
  return s === undefined ? "" : ` (did you mean ${JSON.stringify(s)}?)`;
}

function describe(v: unknown): string {
  if (v === undefined) return "nothing";
  if (v === null) return "null";
  if (Array.isArray(v)) return "an array";
  if (typeof v === "string") return `the string ${clip(JSON.stringify(v))}`;
  if (typeof v === "number") return `the number ${v}`;
  if (typeof v === "object") return "an object";
  return `${typeof v} ${String(v)}`;
}

function clip(s: string, n = 40): string {
  return s.length > n ? `${s.slice(0, n - 1)}…` : s;
}

function lookup(data: unknown, path: Path): unknown {
  let cur = data;
  for (const seg of path) {
    if (cur === null || typeof cur !== "object") return undefined;
    cur = (cur as Record<string | number, unknown>)[seg];
  }
  return cur;
}

function fail(ns: Namespace, code: string, where: string, path: Path, message: string): never {
  throw new InputError(`${ns}.${code}`, message.replace(/\s*\n\s*/g, " "), `${where} ${jsonPath(path)}`);
}

// ---------------------------------------------------------------------------------------------------
// JSON text -> value, with line and column on syntax errors

interface Located {
  pos: number;
  msg: string;
}

/** Find the first JSON syntax error in `text` (null if the text is valid JSON). Pure. */
export function locateJsonError(text: string): Located | null {
  let i = 0;
  const n = text.length;
  const err = (msg: string, pos = i): never => {
    throw { pos, msg } satisfies Located;
  };
  const ws = () => {
    while (i < n) {
      const c = text.charCodeAt(i);
      if (c === 32 || c === 9 || c === 10 || c === 13) i++;
      else break;
    }
  };
  const peek = () => (i < n ? text[i] : "end of input");
  const str = () => {
    const start = i;
    i++; // opening quote
    while (i < n) {
      const c = text[i];
      if (c === '"') {
        i++;
        return;
      }
      if (c === "\\") {
        const e = text[i + 1];
        if (e === "u") {
          if (!/^[0-9a-fA-F]{4}$/.test(text.slice(i + 2, i + 6))) err("invalid \\u escape: expected four hex digits");
          i += 6;
        } else if (e !== undefined && '"\\/bfnrt'.includes(e)) i += 2;
        else err(`invalid escape "\\${e ?? ""}" in a string`);
        continue;
      }
      if (text.charCodeAt(i) < 0x20) err("raw control character (e.g. a line break) inside a string; write it as an escape like \\n");
      i++;
    }
    err("unterminated string", start);
  };
  const num = () => {
    const m = /^-?(0|[1-9][0-9]*)(\.[0-9]+)?([eE][+-]?[0-9]+)?/.exec(text.slice(i, i + 400));
    if (!m || m[0] === "-" || m[0].length === 0) err(`invalid number`);
    i += m![0].length;
    if (i < n && /[0-9.eE+\-A-Za-z]/.test(text[i])) err(`invalid number`, i);
  };
  const value = (depth: number): void => {
    if (depth > 512) err("nesting too deep");
    ws();
    const c = text[i];
    if (c === "{") {
      i++;
      ws();
      if (text[i] === "}") {
        i++;
        return;
      }
      let comma = -1;
      for (;;) {
        ws();
        if (text[i] !== '"') {
          if (text[i] === "}" && comma >= 0) err("trailing comma before '}'; remove it", comma);
          err(`expected a property name in double quotes, found ${show(peek())}`);
        }
        str();
        ws();
        if (text[i] !== ":") err(`expected ':' after a property name, found ${show(peek())}`);
        i++;
        value(depth + 1);
        ws();
        if (text[i] === ",") {
          comma = i++;
          continue;
        }
        if (text[i] === "}") {
          i++;
          return;
        }
        err(`expected ',' or '}' after a property value, found ${show(peek())}${text[i] === '"' ? " (a missing comma?)" : ""}`);
      }
    }
    if (c === "[") {
      i++;
      ws();
      if (text[i] === "]") {
        i++;
        return;
      }
      let comma = -1;
      for (;;) {
        ws();
        if (text[i] === "]" && comma >= 0) err("trailing comma before ']'; remove it", comma);
        value(depth + 1);
        ws();
        if (text[i] === ",") {
          comma = i++;
          continue;
        }
        if (text[i] === "]") {
          i++;
          return;
        }
        err(`expected ',' or ']' after an array element, found ${show(peek())}${text[i] === '"' || text[i] === "{" || text[i] === "[" ? " (a missing comma?)" : ""}`);
      }
    }
    if (c === '"') return str();
    if (c === "-" || (c >= "0" && c <= "9")) return num();
    for (const lit of ["true", "false", "null"]) {
      if (text.startsWith(lit, i)) {
        i += lit.length;
        return;
      }
    }
    if (/^(NaN|-?Infinity)/.test(text.slice(i))) err("NaN and Infinity are not JSON; write a finite number");
    if (c === "'") err("strings must use double quotes");
    err(`expected a value, found ${show(peek())}`);
  };
  try {
    value(0);
    ws();
    if (i < n) err(`unexpected ${show(peek())} after the end of the JSON value`);
    return null;
  } catch (e) {
    if (e && typeof e === "object" && "pos" in e) return e as Located;
    throw e;
  }
}

function show(c: string): string {
  if (c === "end of input") return c;
  const printable = c === "\n" ? "\\n" : c === "\r" ? "\\r" : c === "\t" ? "\\t" : c;
  return `'${printable}'`;
}

/** Line and column (both 1-based) of a character offset. */
export function lineColumn(text: string, pos: number): { line: number; column: number } {
  let line = 1;
  let lineStart = 0;
  for (let k = 0; k < pos && k < text.length; k++) {
    if (text.charCodeAt(k) === 10) {
      line++;
      lineStart = k + 1;
    }
  }
  return { line, column: pos - lineStart + 1 };
}

function parseJsonText(text: string, where: string, ns: Namespace): unknown {
  const body = text.charCodeAt(0) === 0xfeff ? text.slice(1) : text;
  try {
    return JSON.parse(body);
  } catch (e) {
    const loc = locateJsonError(body) ?? { pos: body.length, msg: (e as Error).message };
    const { line, column } = lineColumn(body, loc.pos);
    throw new InputError(`${ns}.json`, `invalid JSON at line ${line}, column ${column}: ${loc.msg}; fix the syntax there`, `${where}:${line}:${column}`);
  }
}

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

function validate<T>(ns: Namespace, schema: z.ZodType<T>, data: unknown, where: string): T {
  const r = schema.safeParse(data);
  if (r.success) return r.data;
  const issues = [...r.error.issues];
  // A misspelt key usually also shows up as a missing required one; report the misspelling first.
  const misspelt = issues.find((i) => i.code === "unrecognized_keys" && i.keys.some((k) => didYouMean(k, knownKeysAt(ns, i.path as Path)) !== undefined));
  issueToError(ns, misspelt ?? issues[0], data, where);
}

function checkFormatTag(ns: Namespace, data: unknown, where: string): void {
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

// ---------------------------------------------------------------------------------------------------
// Model files

/** Parse and validate the text of a gapwatch-mdp/1 model file; `where` names it in messages. */
export function parseModelFile(text: string, where: string): FiniteModel {
  const data = parseJsonText(text, where, "model");
  checkFormatTag("model", data, where);
  const doc = validate("model", modelSchema, data, where) as ModelDocument;
  return buildFromDocument(doc, where);
}

/** Read and parse a model file. */
export function loadModelFile(file: string): FiniteModel {
  let text: string;
  try {
    text = readFileSync(file, "utf8");
  } catch (e) {
    throw new InputError("model.read", `cannot read the model file (${(e as NodeJS.ErrnoException).code ?? (e as Error).message}); check the path`, file);
  }
  return parseModelFile(text, file);
}

const CANONICAL_INT = /^(0|[1-9][0-9]*)$/;

/** Semantic checks on a schema-valid document, then build through ModelBuilder. */
function buildFromDocument(doc: ModelDocument, where: string): FiniteModel {
  function F(code: string, path: Path, msg: string): never {
    fail("model", code, where, path, msg);
  }

  if (!(doc.gamma > 0 && doc.gamma <= 1)) F("gamma", ["gamma"], `gamma must be in (0, 1], got ${doc.gamma}; use e.g. 0.99 (or 1 for an episodic task whose policies all terminate)`);

  const nA = doc.actions.length;
  {
    const seen = new Map<string, number>();
    doc.actions.forEach((a, i) => {
      if (seen.has(a)) F("duplicateAction", ["actions", i], `action name ${JSON.stringify(a)} is also action ${seen.get(a)}; give every action a distinct name`);
      seen.set(a, i);
    });
  }
  const features = doc.features;
  const nF = features.length;
  const featureIndex = new Map<string, number>();
  features.forEach((f, i) => {
    if (featureIndex.has(f)) F("duplicateFeature", ["features", i], `feature ${JSON.stringify(f)} is declared twice (also at index ${featureIndex.get(f)}); remove the duplicate`);
    featureIndex.set(f, i);
  });

  const nS = typeof doc.states === "number" ? doc.states : doc.states.length;
  const labels = typeof doc.states === "number" ? Array.from({ length: nS }, (_, s) => String(s)) : doc.states;
  const byLabel = new Map<string, number[]>();
  labels.forEach((l, s) => {
    const list = byLabel.get(l);
    if (list) list.push(s);
    else byLabel.set(l, [s]);
  });
  const stateRange = `0..${nS - 1}`;
  const checkState = (s: number, path: Path, code = "stateIndex", what = "state index"): void => {
    if (s < 0 || s >= nS) F(code, path, `${what} ${s} is out of range; states are ${stateRange} (${nS} declared in $.states)`);
  };
  const describeState = (s: number): string => (labels[s] === String(s) ? `state ${s}` : `state ${s} (${JSON.stringify(clip(labels[s]))})`);
  /** A "<state>" key: an index as a decimal string, or a label. */
  const resolveKey = (key: string, path: Path): number => {
    const cands = new Set<number>(byLabel.get(key) ?? []);
    if (CANONICAL_INT.test(key) && Number(key) < nS) cands.add(Number(key));
    if (cands.size === 1) return [...cands][0];
    if (cands.size === 0) {
      const labelHint = typeof doc.states === "number" ? "" : hint(key, labels);
      F("unknownState", path, `${JSON.stringify(clip(key))} is neither a state index in ${stateRange} nor a state label${labelHint}; use an index as a string ("3") or a label from $.states`);
    }
    F("ambiguousState", path, `${JSON.stringify(clip(key))} names states ${[...cands].sort((a, b) => a - b).join(" and ")} (it is a label and an index, or a repeated label); use the index of the state you mean, or make the labels unique`);
  };

  const terminal = new Uint8Array(nS);
  doc.terminal.forEach((s, i) => {
    checkState(s, ["terminal", i]);
    terminal[s] = 1;
  });

  // Start distribution.
  const start = new Float64Array(nS);
  if (typeof doc.start === "number") {
    checkState(doc.start, ["start"]);
    start[doc.start] = 1;
  } else {
    const keys = Object.keys(doc.start);
    if (keys.length === 0) F("start", ["start"], `the start distribution is empty; give at least one state with probability > 0, e.g. {"0": 1}`);
    let sum = 0;
    const from = new Map<number, string>();
    for (const k of keys) {
      const s = resolveKey(k, ["start", k]);
      const p = doc.start[k];
      if (!(p >= 0 && p <= 1 + PROB_TOLERANCE)) F("probability", ["start", k], `start probability ${p} is outside [0, 1]; give a probability`);
      if (from.has(s)) F("duplicateStart", ["start", k], `${describeState(s)} is listed twice in the start distribution (also as ${JSON.stringify(from.get(s))}); merge the entries`);
      from.set(s, k);
      start[s] = p;
      sum += p;
    }
    if (Math.abs(sum - 1) > PROB_TOLERANCE) F("startSum", ["start"], `start probabilities sum to ${sum}, expected 1 (within ${PROB_TOLERANCE}); rescale them so they sum to 1`);
  }

  // Transitions: each non-terminal pair exactly once.
  const entryOf = new Int32Array(nS * nA).fill(-1);
  const scratch = new Float64Array(nF);
  const builder = new ModelBuilder({
    name: doc.name,
    nStates: nS,
    actions: doc.actions,
    features,
    gamma: doc.gamma,
    horizon: doc.horizon ?? DEFAULT_HORIZON,
    stateLabels: labels,
    source: where,
  });
  doc.transitions.forEach((t, ti) => {
    const tp: Path = ["transitions", ti];
    checkState(t.state, [...tp, "state"]);
    if (t.action < 0 || t.action >= nA) F("actionIndex", [...tp, "action"], `action index ${t.action} is out of range; actions are 0..${nA - 1} (${doc.actions.map((a, i) => `${i}=${a}`).join(", ")})`);
    const k = t.state * nA + t.action;
    if (entryOf[k] >= 0) {
      F("duplicateTransition", tp, `${describeState(t.state)} action ${t.action} (${doc.actions[t.action]}) already appears at $.transitions[${entryOf[k]}]; merge the two entries' outcomes into one`);
    }
    entryOf[k] = ti;
    const isTerminal = terminal[t.state] === 1;
    let sum = 0;
    t.outcomes.forEach((o, oi) => {
      const op: Path = [...tp, "outcomes", oi];
      checkState(o.next, [...op, "next"], "nextState", "next state");
      if (!(o.p >= 0 && o.p <= 1 + PROB_TOLERANCE)) F("probability", [...op, "p"], `probability ${o.p} is outside [0, 1]; give a probability`);
      sum += o.p;
      scratch.fill(0);
      let nonzero = false;
      for (const [f, v] of Object.entries(o.features ?? {})) {
        const fi = featureIndex.get(f);
        if (fi === undefined) {
          F("unknownFeature", [...op, "features", f], `feature ${JSON.stringify(f)} is not declared${hint(f, features)}; declared features: ${features.length ? features.join(", ") : "none"}; add it to $.features or fix the name`);
        }
        scratch[fi!] = v;
        if (v !== 0) nonzero = true;
      }
      const intent = o.intent ?? 0;
      if (isTerminal) {
        if (o.next !== t.state) F("terminalNotAbsorbing", [...op, "next"], `${describeState(t.state)} is terminal, so its outcomes must stay in it, but this one goes to ${o.next}; set "next": ${t.state} or remove the state from $.terminal`);
        if (nonzero || intent !== 0) F("terminalNotAbsorbing", op, `${describeState(t.state)} is terminal, so its outcomes must carry zero features and zero intent; remove them, or remove the state from $.terminal`);
      } else {
        builder.addOutcome(t.state, t.action, o.next, o.p, scratch, intent);
      }
    });
    if (Math.abs(sum - 1) > PROB_TOLERANCE) {
      F("probabilitySum", [...tp, "outcomes"], `outcome probabilities of ${describeState(t.state)} action ${t.action} (${doc.actions[t.action]}) sum to ${sum}, expected 1 (within ${PROB_TOLERANCE}); fix the "p" values so they sum to 1`);
    }
  });
  let missing = 0;
  let firstMissing = -1;
  for (let s = 0; s < nS; s++) {
    if (terminal[s]) continue;
    for (let a = 0; a < nA; a++) {
      if (entryOf[s * nA + a] < 0) {
        if (firstMissing < 0) firstMissing = s * nA + a;
        missing++;
      }
    }
  }
  if (missing > 0) {
    const s = Math.floor(firstMissing / nA);
    const a = firstMissing % nA;
    F(
      "missingTransition",
      ["transitions"],
      `no entry for ${describeState(s)} action ${a} (${doc.actions[a]})${missing > 1 ? ` (${missing} non-terminal state-action pairs are missing in all)` : ""}; add {"state": ${s}, "action": ${a}, "outcomes": [...]} or list state ${s} in $.terminal`,
    );
  }

  for (let s = 0; s < nS; s++) {
    if (terminal[s]) builder.setTerminal(s);
    if (start[s] !== 0) builder.setStart(s, start[s]);
  }

  if (doc.groups) {
    const groups: (string | null)[] = new Array(nS).fill(null);
    for (const [k, g] of Object.entries(doc.groups)) groups[resolveKey(k, ["groups", k])] = g;
    builder.setGroups(groups);
  }

  if (doc.rewards) {
    const variants: Record<string, RewardVariant> = {};
    for (const [vname, v] of Object.entries(doc.rewards)) {
      if (vname.length === 0) F("rewardName", ["rewards", vname], `a reward variant needs a non-empty name; rename the key`);
      for (const f of Object.keys(v.weights)) {
        if (!featureIndex.has(f)) {
          F("unknownFeature", ["rewards", vname, "weights", f], `weight for undeclared feature ${JSON.stringify(f)}${hint(f, features)}; declared features: ${features.length ? features.join(", ") : "none"}; add it to $.features or fix the name`);
        }
      }
      variants[vname] = { name: vname, weights: { ...v.weights } };
    }
    builder.setVariants(variants);
  }
  return builder.build();
}

// ---------------------------------------------------------------------------------------------------
// Reward files

/** Parse and validate the text of a gapwatch-reward/1 reward file; `where` names it in messages. */
export function parseRewardFile(text: string, where: string): RewardVariant {
  const data = parseJsonText(text, where, "reward");
  checkFormatTag("reward", data, where);
  const doc = validate("reward", rewardSchema, data, where) as RewardDocument;
  const variant: RewardVariant = { name: doc.name, env: doc.env, weights: { ...doc.weights } };
  if (doc.shaping) variant.shaping = { potential: Array.isArray(doc.shaping.potential) ? [...doc.shaping.potential] : doc.shaping.potential, scale: doc.shaping.scale };
  return variant;
}

// ---------------------------------------------------------------------------------------------------
// Export

/**
 * Write a compiled model as a gapwatch-mdp/1 document (a plain object; `JSON.stringify` it, or use
 * `formatModelDocument` for a diff-friendly layout). Parsing the result gives back the same dynamics,
 * labels, start distribution, terminal flags, features, intent, horizon, groups and variant weights;
 * shaping becomes a `shaping.<variant>` feature column (see the module comment). Terminal states are
 * not listed in `transitions` (their self-loops are implied). Zero outcome features and zero intent are
 * left out; -0 is written as 0.
 */
export function exportModel(model: FiniteModel): ModelDocument {
  const nS = model.nStates;
  const nA = model.nActions;
  const nF0 = model.features.length;
  const labels = model.stateLabels;

  // Shaping columns.
  const features = [...model.features];
  const shapingCols: Float64Array[] = [];
  const rewards: Record<string, { weights: Record<string, number> }> = {};
  for (const [key, v] of Object.entries(model.variants ?? {})) {
    checkVariant(model, v);
    const weights: Record<string, number> = {};
    for (const f of model.features) if (v.weights[f] !== undefined) weights[f] = v.weights[f];
    const phi = resolvePotential(model, v);
    if (phi && v.shaping) {
      let col = `${SHAPING_FEATURE_PREFIX}${key}`;
      for (let k = 2; features.includes(col); k++) col = `${SHAPING_FEATURE_PREFIX}${key}.${k}`;
      features.push(col);
      const vals = new Float64Array(model.next.length);
      const scale = v.shaping.scale;
      for (let s = 0; s < nS; s++) {
        if (model.terminal[s]) continue;
        for (let o = model.saStart[s * nA]; o < model.saStart[(s + 1) * nA]; o++) {
          const sp = model.next[o];
          vals[o] = scale * (model.gamma * (model.terminal[sp] ? 0 : phi[sp]) - phi[s]);
        }
      }
      shapingCols.push(vals);
      weights[col] = 1;
    }
    rewards[key] = { weights };
  }

  const transitions: TransitionDocument[] = [];
  for (let s = 0; s < nS; s++) {
    if (model.terminal[s]) continue;
    for (let a = 0; a < nA; a++) {
      const k = s * nA + a;
      const outcomes: OutcomeDocument[] = [];
      for (let o = model.saStart[k]; o < model.saStart[k + 1]; o++) {
        const out: OutcomeDocument = { next: model.next[o], p: model.prob[o] + 0 };
        const fv: Record<string, number> = {};
        let any = false;
        for (let f = 0; f < nF0; f++) {
          const x = model.featureValues[o * nF0 + f];
          if (x !== 0) {
            fv[model.features[f]] = x;
            any = true;
          }
        }
        shapingCols.forEach((col, j) => {
          if (col[o] !== 0) {
            fv[features[nF0 + j]] = col[o];
            any = true;
          }
        });
        if (any) out.features = fv;
        if (model.intent[o] !== 0) out.intent = model.intent[o];
        outcomes.push(out);
      }
      transitions.push({ state: s, action: a, outcomes });
    }
  }

  const keyOf = (s: number): string => stateKey(labels, s, model.name);
  let startDoc: number | Record<string, number>;
  const starts: number[] = [];
  for (let s = 0; s < nS; s++) if (model.start[s] !== 0) starts.push(s);
  if (starts.length === 1 && model.start[starts[0]] === 1) startDoc = starts[0];
  else {
    startDoc = {};
    for (const s of starts) startDoc[keyOf(s)] = model.start[s];
  }
  const terminal: number[] = [];
  for (let s = 0; s < nS; s++) if (model.terminal[s]) terminal.push(s);

  const doc: ModelDocument = {
    format: MODEL_FORMAT,
    name: model.name,
    gamma: model.gamma,
    actions: [...model.actions],
    states: [...labels],
    start: startDoc,
    terminal,
    features,
    transitions,
  };
  if (model.variants) doc.rewards = rewards;
  doc.horizon = model.horizon;
  if (model.groups?.some((g) => g !== null && g !== undefined)) {
    const groups: Record<string, string> = {};
    model.groups.forEach((g, s) => {
      if (g !== null && g !== undefined) groups[keyOf(s)] = g;
    });
    doc.groups = groups;
  }
  return doc;
}

/** The `<state>` key that resolves to exactly state `s` under the parse rules: its label, else its index. */
function stateKey(labels: readonly string[], s: number, name: string): string {
  const resolves = (key: string): boolean => {
    let hits = 0;
    let hitsOther = false;
    labels.forEach((l, t) => {
      if (l === key) {
        hits++;
        if (t !== s) hitsOther = true;
      }
    });
    if (CANONICAL_INT.test(key) && Number(key) < labels.length) {
      hits++;
      if (Number(key) !== s) hitsOther = true;
    }
    return hits > 0 && !hitsOther;
  };
  if (resolves(labels[s])) return labels[s];
  if (resolves(String(s))) return String(s);
  throw new InputError(
    "model.export",
    `state ${s} cannot be named in a model file: its label is shared and its index "${s}" is another state's label; make the state labels unique`,
    name,
  );
}

/**
 * Serialize a model document with one transition per line (stable, diff-friendly, still plain JSON).
 * `JSON.parse(formatModelDocument(d))` deep-equals `d`.
 */
export function formatModelDocument(doc: ModelDocument): string {
  const lines: string[] = [];
  const entries = Object.entries(doc);
  entries.forEach(([k, v], i) => {
    const comma = i < entries.length - 1 ? "," : "";
    if (k === "transitions" && Array.isArray(v) && v.length > 0) {
      lines.push(`  "transitions": [`);
      v.forEach((t, j) => lines.push(`    ${JSON.stringify(t)}${j < v.length - 1 ? "," : ""}`));
      lines.push(`  ]${comma}`);
    } else if (k === "rewards" && v && typeof v === "object" && Object.keys(v).length > 0) {
      const names = Object.keys(v);
      lines.push(`  "rewards": {`);
      names.forEach((n, j) => lines.push(`    ${JSON.stringify(n)}: ${JSON.stringify((v as Record<string, unknown>)[n])}${j < names.length - 1 ? "," : ""}`));
      lines.push(`  }${comma}`);
    } else {
      lines.push(`  ${JSON.stringify(k)}: ${JSON.stringify(v)}${comma}`);
    }
  });
  return `{\n${lines.join("\n")}\n}\n`;
}
