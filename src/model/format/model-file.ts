/** Model files (`gapwatch-mdp/1`, described in ./schema.ts): parse, validate, build. */
import { readFileSync } from "node:fs";
import { InputError } from "../../errors.js";
import { ModelBuilder, PROB_TOLERANCE, type CsrArrays, type ModelExtras, type ModelSpec } from "../builder.js";
import { scanTopLevel, scanTransitions, type ScannedTransitions } from "./model-scan.js";
import type { FiniteModel, RewardVariant } from "../types.js";
import { clip, fail, hint, parseJsonText, RESERVED_KEY, type Path } from "./json-errors.js";
import { CANONICAL_INT, checkFormatTag, DEFAULT_HORIZON, modelSchema, validate, type ModelDocument } from "./schema.js";
import { emptyDict } from "../../util/own.js";

/** Parse and validate the text of a gapwatch-mdp/1 model file; `where` names it in messages. */
export function parseModelFile(text: string, where: string, opts: ModelFileOptions = {}): FiniteModel {
  const data = parseJsonText(text, where, "model");
  checkFormatTag("model", data, where);
  const doc = validate("model", modelSchema, data, where) as ModelDocument;
  return buildFromDocument(doc, where, opts.maxStates ?? DEFAULT_MAX_MODEL_STATES);
}

export interface ModelFileOptions {
  /** Hard bound on the declared state count (`--max-states`); default DEFAULT_MAX_MODEL_STATES. */
  maxStates?: number;
}

/** Default hard bound on a model file's state count (raise it with `--max-states`). */
export const DEFAULT_MAX_MODEL_STATES = 100_000;
/** Bound on the magnitude of feature values and intent increments (keeps every return finite). */
export const MAX_MAGNITUDE = 1e12;

/** Read and parse a model file (the byte-level fast path first, see ./model-scan.ts). */
export function loadModelFile(file: string, opts: ModelFileOptions = {}): FiniteModel {
  let bytes: Buffer;
  try {
    bytes = readFileSync(file);
  } catch (e) {
    throw new InputError("model.read", `cannot read the model file (${(e as NodeJS.ErrnoException).code ?? (e as Error).message}); check the path`, file);
  }
  return parseModelBytes(bytes, file, opts);
}

/**
 * Parse the UTF-8 bytes of a model file: the fast path when it accepts the file, else the ordinary
 * path (`parseModelFile` on the decoded text), which also gives every error message.
 */
export function parseModelBytes(bytes: Uint8Array, where: string, opts: ModelFileOptions = {}): FiniteModel {
  const fast = fastModel(bytes, where, opts.maxStates ?? DEFAULT_MAX_MODEL_STATES);
  if (fast) return fast;
  return parseModelFile(Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength).toString("utf8"), where, opts);
}

/**
 * The fast path: the JSON values of the small top-level keys are parsed and checked as usual, the
 * transitions are walked byte by byte into typed arrays. Null whenever the file needs the ordinary
 * path (anything unexpected, including every error); never a model that path would refuse.
 */
export function fastModel(bytes: Uint8Array, where: string, maxStates: number): FiniteModel | null {
  const buf = Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  try {
    const top = scanTopLevel(bytes);
    const span = top?.spans.get("transitions");
    if (!top || !span) return null;
    const data: Record<string, unknown> = {};
    for (const [k, [from, to]] of top.spans) {
      if (k === "transitions") {
        // The walk takes only known keys, without escapes, and declared feature names.
        data[k] = [];
        continue;
      }
      // The reserved key may hide behind an escape: both go the ordinary way.
      const text = buf.toString("utf8", from, to);
      if (k === RESERVED_KEY || text.includes(RESERVED_KEY) || text.includes("\\u")) return null;
      data[k] = JSON.parse(text);
    }
    checkFormatTag("model", data, where);
    const doc = validate("model", modelSchema, data, where) as ModelDocument;
    const nS = typeof doc.states === "number" ? doc.states : doc.states.length;
    // Before anything is allocated per state: a file that cannot list every pair goes the ordinary way.
    if (nS > maxStates || (nS - new Set(doc.terminal).size) * doc.actions.length > top.entries) return null;
    const h = checkHeader(doc, where);
    const t = scanTransitions(bytes, span[0], span[1], { nS, nA: h.nA, features: doc.features }, top.entries, top.outcomes);
    const csr = t && assembleScanned(t, h);
    if (!csr) return null;
    return ModelBuilder.fromCsr(modelSpec(doc, h.labels, where), csr, checkExtras(doc, h));
  } catch {
    return null;
  }
}

/**
 * The checks the ordinary path makes on transitions, over scanned entries; then the CSR arrays (the
 * scanned ones themselves when the file lists every pair in order and has no terminal state).
 */
function assembleScanned(t: ScannedTransitions, h: ModelHeader): CsrArrays | null {
  const { nS, nA, nF, terminal } = h;
  const nSA = nS * nA;
  const entryOf = new Int32Array(nSA).fill(-1);
  let inOrder = true;
  for (let e = 0; e < t.count; e++) {
    const s = t.state[e];
    const a = t.action[e];
    if (s >= nS || a >= nA) return null;
    const k = s * nA + a;
    if (entryOf[k] >= 0) return null;
    entryOf[k] = e;
    if (k !== e) inOrder = false;
    const isTerminal = terminal[s] === 1;
    let sum = 0;
    for (let o = t.outStart[e]; o < t.outStart[e + 1]; o++) {
      const p = t.prob[o];
      if (t.next[o] >= nS || !(p >= 0 && p <= 1 + PROB_TOLERANCE)) return null;
      sum += p;
      const intent = t.intent[o];
      if (!(Math.abs(intent) <= MAX_MAGNITUDE)) return null;
      let nonzero = intent !== 0;
      for (let f = o * nF; f < (o + 1) * nF; f++) {
        const v = t.featureValues[f];
        if (!(Math.abs(v) <= MAX_MAGNITUDE)) return null;
        if (v !== 0) nonzero = true;
      }
      if (isTerminal && (t.next[o] !== s || nonzero)) return null;
    }
    if (Math.abs(sum - 1) > PROB_TOLERANCE) return null;
  }
  let anyTerminal = false;
  for (let s = 0; s < nS; s++) {
    if (terminal[s]) {
      anyTerminal = true;
      continue;
    }
    for (let k = s * nA; k < (s + 1) * nA; k++) if (entryOf[k] < 0) return null;
  }
  // The ordinary path sets only non-zero start probabilities: a -0 there is +0.
  const start = h.start;
  for (let s = 0; s < nS; s++) if (start[s] === 0) start[s] = 0;
  if (inOrder && !anyTerminal && t.count === nSA) {
    return { terminal, start, saStart: t.outStart, next: t.next, prob: t.prob, featureValues: t.featureValues, intent: t.intent };
  }
  const saStart = new Int32Array(nSA + 1);
  for (let k = 0; k < nSA; k++) {
    const e = entryOf[k];
    saStart[k + 1] = saStart[k] + (terminal[(k / nA) | 0] ? 1 : t.outStart[e + 1] - t.outStart[e]);
  }
  const nO = saStart[nSA];
  const next = new Int32Array(nO);
  const prob = new Float64Array(nO);
  const featureValues = new Float64Array(nO * nF);
  const intent = new Float64Array(nO);
  for (let k = 0; k < nSA; k++) {
    const s = (k / nA) | 0;
    const o = saStart[k];
    if (terminal[s]) {
      next[o] = s;
      prob[o] = 1;
      continue;
    }
    const e = entryOf[k];
    const from = t.outStart[e];
    const to = t.outStart[e + 1];
    next.set(t.next.subarray(from, to), o);
    prob.set(t.prob.subarray(from, to), o);
    intent.set(t.intent.subarray(from, to), o);
    featureValues.set(t.featureValues.subarray(from * nF, to * nF), o * nF);
  }
  return { terminal, start, saStart, next, prob, featureValues, intent };
}

/** What the checks of a document's header (everything but its transitions) establish. */
export interface ModelHeader {
  nS: number;
  nA: number;
  nF: number;
  labels: readonly string[];
  featureIndex: Map<string, number>;
  terminal: Uint8Array;
  start: Float64Array;
  F: (code: string, path: Path, msg: string) => never;
  checkState: (s: number, path: Path, code?: string, what?: string) => void;
  describeState: (s: number) => string;
  resolveKey: (key: string, path: Path) => number;
}

/** Semantic checks on the header of a schema-valid document: gamma, names, labels, terminal states, start. */
export function checkHeader(doc: ModelDocument, where: string): ModelHeader {
  function F(code: string, path: Path, msg: string): never {
    fail("model", code, where, path, msg);
  }

  if (!(doc.gamma > 0 && doc.gamma <= 1)) F("gamma", ["gamma"], `gamma must be in (0, 1], got ${doc.gamma}; use e.g. 0.99 (or 1 for an episodic task whose policies all terminate)`);

  for (const [list, items] of [["actions", doc.actions], ["features", doc.features], ["states", Array.isArray(doc.states) ? doc.states : []]] as const) {
    const i = items.indexOf(RESERVED_KEY);
    if (i >= 0) F("reservedName", [list, i], `the name "${RESERVED_KEY}" is reserved; rename it`);
  }
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

  return { nS, nA, nF, labels, featureIndex, terminal, start, F, checkState, describeState, resolveKey };
}

/** The spec every model file builds with. */
export function modelSpec(doc: ModelDocument, labels: readonly string[], where: string): ModelSpec {
  return { name: doc.name, nStates: labels.length, actions: doc.actions, features: doc.features, gamma: doc.gamma, horizon: doc.horizon ?? DEFAULT_HORIZON, stateLabels: labels, source: where };
}

/** Semantic checks on a schema-valid document, then build through ModelBuilder. */
function buildFromDocument(doc: ModelDocument, where: string, maxStates: number): FiniteModel {
  function F(code: string, path: Path, msg: string): never {
    fail("model", code, where, path, msg);
  }
  checkDescribable(doc, maxStates, F);
  const header = checkHeader(doc, where);
  const { nS, nA, nF, labels, featureIndex, terminal, start, checkState, describeState } = header;
  const features = doc.features;

  // Transitions: each non-terminal pair exactly once.
  const entryOf = new Int32Array(nS * nA).fill(-1);
  const scratch = new Float64Array(nF);
  const builder = new ModelBuilder(modelSpec(doc, labels, where));
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
        if (!(Math.abs(v) <= MAX_MAGNITUDE)) F("magnitude", [...op, "features", f], `feature ${JSON.stringify(clip(f))} has value ${v}, beyond the bound ${MAX_MAGNITUDE}; rescale the feature`);
        scratch[fi!] = v;
        if (v !== 0) nonzero = true;
      }
      const intent = o.intent ?? 0;
      if (!(Math.abs(intent) <= MAX_MAGNITUDE)) F("magnitude", [...op, "intent"], `intent ${intent} is beyond the bound ${MAX_MAGNITUDE}; rescale the intent`);
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

  const extras = checkExtras(doc, header);
  if (extras.groups) builder.setGroups(extras.groups);
  if (extras.variants) builder.setVariants(extras.variants);
  return builder.build();
}

/** Groups and reward variants of a document (checked against its header). */
export function checkExtras(doc: ModelDocument, h: ModelHeader): ModelExtras {
  const { F, featureIndex, resolveKey } = h;
  const features = doc.features;
  const extras: ModelExtras = {};
  if (doc.groups) {
    const groups: (string | null)[] = new Array(h.nS).fill(null);
    for (const [k, g] of Object.entries(doc.groups)) groups[resolveKey(k, ["groups", k])] = g;
    extras.groups = groups;
  }

  if (doc.rewards) {
    const variants = emptyDict<RewardVariant>();
    for (const [vname, v] of Object.entries(doc.rewards)) {
      if (vname.length === 0) F("rewardName", ["rewards", vname], `a reward variant needs a non-empty name; rename the key`);
      for (const f of Object.keys(v.weights)) {
        const w = v.weights[f];
        if (!(Math.abs(w) <= MAX_MAGNITUDE)) F("magnitude", ["rewards", vname, "weights", f], `weight ${w} is beyond the bound ${MAX_MAGNITUDE}; rescale the weights`);
        if (!featureIndex.has(f)) {
          F("unknownFeature", ["rewards", vname, "weights", f], `weight for undeclared feature ${JSON.stringify(f)}${hint(f, features)}; declared features: ${features.length ? features.join(", ") : "none"}; add it to $.features or fix the name`);
        }
      }
      variants[vname] = { name: vname, weights: Object.assign(emptyDict<number>(), v.weights) };
    }
    extras.variants = variants;
  }
  return extras;
}

/**
 * Check the declared state count against the hard bound and against what the file can describe,
 * before anything is allocated per state: every non-terminal state needs one transition entry per
 * action, so `(states - distinct terminal states) * actions` may not exceed the number of entries.
 * When it does, the first missing pair is named (found by scanning only as far as the entries reach).
 */
function checkDescribable(doc: ModelDocument, maxStates: number, F: (code: string, path: Path, msg: string) => never): void {
  const nS = typeof doc.states === "number" ? doc.states : doc.states.length;
  const nA = doc.actions.length;
  if (nS > maxStates) {
    F("tooManyStates", ["states"], `${nS} states declared, more than the bound ${maxStates}; raise it with --max-states if the file really describes that many`);
  }
  const terminal = new Set<number>();
  for (const s of doc.terminal) if (Number.isInteger(s) && s >= 0 && s < nS) terminal.add(s);
  const pairs = new Set<number>();
  for (const t of doc.transitions) {
    if (t.state >= 0 && t.state < nS && !terminal.has(t.state) && t.action >= 0 && t.action < nA) pairs.add(t.state * nA + t.action);
  }
  const needed = (nS - terminal.size) * nA;
  if (needed <= doc.transitions.length) return;
  const missing = needed - pairs.size;
  for (let s = 0; s < nS; s++) {
    if (terminal.has(s)) continue;
    for (let a = 0; a < nA; a++) {
      if (pairs.has(s * nA + a)) continue;
      F(
        "missingTransition",
        ["transitions"],
        `no entry for state ${s} action ${a} (${clip(doc.actions[a])}) (${missing} non-terminal state-action pairs are missing in all; $.states declares ${nS} states, $.transitions has ${doc.transitions.length} entries); add {"state": ${s}, "action": ${a}, "outcomes": [...]} or list state ${s} in $.terminal (or lower $.states)`,
      );
    }
  }
}
