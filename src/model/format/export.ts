/**
 * Export of a compiled model as a `gapwatch-mdp/1` model file; shaping becomes a `shaping.<variant>`
 * feature column (see ./schema.ts for the format and the rules).
 */
import { InputError } from "../../errors.js";
import { resolvePotential, checkVariant } from "../reward.js";
import type { FiniteModel } from "../types.js";
import { CANONICAL_INT, MODEL_FORMAT, SHAPING_FEATURE_PREFIX, type ModelDocument, type OutcomeDocument, type TransitionDocument } from "./schema.js";
import { ownValue } from "../../util/own.js";

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
    for (const f of model.features) if (ownValue(v.weights, f) !== undefined) weights[f] = v.weights[f];
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