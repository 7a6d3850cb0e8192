/**
 * Writing a FiniteModel in the explicit DRN format (the grammar, the mapping of features, intent,
 * labels and potentials, and what is exact and what is lost are described in drn.ts, which reads it).
 */
import { DRN_GROUP_PREFIX, DRN_INIT, DRN_INTENT, DRN_POTENTIAL_PREFIX, DRN_TERMINAL, META, type DrnExport, type DrnExportOptions } from "./drn-types.js";
import { InputError } from "../errors.js";
import type { FiniteModel } from "./types.js";

/** A reward model of the export: per-(s, a) values and, for potentials, per-state values. */
interface Column {
  name: string;
  choice?: Float64Array;
  state?: Float64Array;
}

/** Shortest decimal that reads back to the same double; -0 as 0. */
function num(x: number): string {
  return x === 0 ? "0" : String(x);
}

/**
 * Write `model` as a DRN MDP (see the module comment for the mapping). Throws `drn.name` when a
 * feature, action, potential or group name cannot be written (whitespace or '"'), or when a feature
 * has the intent reward model's name.
 */
export function formatDrn(model: FiniteModel, opts: DrnExportOptions = {}): DrnExport {
  const intentName = opts.intentRewardModel ?? DRN_INTENT;
  const terminalLabel = opts.terminalLabel ?? DRN_TERMINAL;
  const where = model.source ?? model.name;
  const nS = model.nStates;
  const nA = model.nActions;
  const nF = model.features.length;
  const nSA = nS * nA;
  const warnings: string[] = [];
  const checkName = (n: string, what: string): void => {
    if (n === "" || /[\s"]/.test(n) || n.startsWith("[") || n.startsWith("$")) {
      throw new InputError("drn.name", `${what} "${n}" cannot be written in DRN (no whitespace or '"', not empty, not starting with [ or $)`, where);
    }
  };
  for (const f of model.features) {
    checkName(f, "feature");
    if (f.startsWith(DRN_POTENTIAL_PREFIX)) throw new InputError("drn.name", `feature "${f}" starts with "${DRN_POTENTIAL_PREFIX}", which DRN import reads as a potential; rename the feature`, where);
  }
  for (const a of model.actions) checkName(a, "action");
  checkName(intentName, "intent reward model");
  checkName(terminalLabel, "terminal label");
  if (model.features.includes(intentName)) {
    throw new InputError("drn.name", `feature "${intentName}" has the intent reward model's name; choose another intent reward model name`, where);
  }

  // Reward columns: features, intent (expectations per state-action), potentials (per state).
  const columns: Column[] = [];
  const expectation = (value: (o: number) => number, label: string): Float64Array => {
    const out = new Float64Array(nSA);
    let differ = 0;
    let example = "";
    for (let k = 0; k < nSA; k++) {
      const s = (k / nA) | 0;
      if (model.terminal[s]) continue;
      let acc = 0;
      const lo = model.saStart[k];
      const hi = model.saStart[k + 1];
      let same = true;
      for (let o = lo; o < hi; o++) {
        acc += model.prob[o] * value(o);
        if (value(o) !== value(lo)) same = false;
      }
      out[k] = acc;
      if (!same) {
        if (differ === 0) example = `state ${s} (${model.stateLabels[s]}) action ${model.actions[k % nA]}`;
        differ++;
      }
    }
    if (differ > 0) {
      warnings.push(
        `${label} differs between the outcomes of ${differ} state-action pair(s), e.g. ${example}: written as its expectation per state-action; values and optimal policies are unchanged, but per-outcome evidence (such as a loop that pays on only one outcome) is lost`,
      );
    }
    return out;
  };
  model.features.forEach((f, j) => columns.push({ name: f, choice: expectation((o) => model.featureValues[o * nF + j], `feature "${f}"`) }));
  columns.push({ name: intentName, choice: expectation((o) => model.intent[o], "the intent") });
  for (const [p, phi] of Object.entries(model.potentials ?? {})) {
    checkName(p, "potential");
    columns.push({ name: `${DRN_POTENTIAL_PREFIX}${p}`, state: phi });
  }
  const stateRewards = columns.some((c) => c.state);

  const out: string[] = [];
  out.push("// DRN written by gapwatch");
  out.push(`${META} name ${model.name.replace(/[\r\n]+/g, " ")}`);
  out.push(`${META} gamma ${num(model.gamma)}`);
  out.push(`${META} horizon ${model.horizon}`);
  const starts: number[] = [];
  for (let s = 0; s < nS; s++) if (model.start[s] > 0) starts.push(s);
  if (starts.some((s) => model.start[s] !== model.start[starts[0]])) {
    for (const s of starts) out.push(`${META} start ${s} ${num(model.start[s])}`);
    warnings.push("the start distribution is not uniform over its states: other tools see only the init label (gapwatch reads the weights back from the start comments)");
  }
  out.push("@type: MDP", "@parameters", "", "@reward_models", columns.map((c) => c.name).join(" "));
  out.push("@nr_states", String(nS), "@nr_choices", String(nSA), "@model");

  const merged = new Map<number, number>();
  for (let s = 0; s < nS; s++) {
    let head = `state ${s}`;
    if (stateRewards) head += ` [${columns.map((c) => num(c.state && !model.terminal[s] ? c.state[s] : 0)).join(", ")}]`;
    const labels: string[] = [];
    if (model.start[s] > 0) labels.push(DRN_INIT);
    if (model.terminal[s]) labels.push(terminalLabel);
    const g = model.groups?.[s];
    if (g !== null && g !== undefined) {
      if (g.includes('"') || /[\r\n]/.test(g)) throw new InputError("drn.name", `group "${g}" of state ${s} cannot be written in DRN (no '"' or line breaks)`, where);
      labels.push(/\s/.test(g) ? `"${DRN_GROUP_PREFIX}${g}"` : `${DRN_GROUP_PREFIX}${g}`);
    }
    out.push(labels.length ? `${head} ${labels.join(" ")}` : head);
    const label = model.stateLabels[s].replace(/[\r\n]+/g, " ");
    if (label !== String(s)) out.push(`//${label}`);
    for (let a = 0; a < nA; a++) {
      const k = s * nA + a;
      const rewards = columns.map((c) => num(c.choice && !model.terminal[s] ? c.choice[k] : 0)).join(", ");
      out.push(`\taction ${model.actions[a]} [${rewards}]`);
      if (model.terminal[s]) {
        out.push(`\t\t${s} : 1`);
        continue;
      }
      merged.clear();
      for (let o = model.saStart[k]; o < model.saStart[k + 1]; o++) merged.set(model.next[o], (merged.get(model.next[o]) ?? 0) + model.prob[o]);
      for (const t of [...merged.keys()].sort((x, y) => x - y)) out.push(`\t\t${t} : ${num(merged.get(t)!)}`);
    }
  }
  const dropped: string[] = [];
  if (model.variants && Object.keys(model.variants).length > 0) dropped.push("reward variants (keep them as reward files)");
  if (model.observations) dropped.push("observations");
  if (model.layout) dropped.push("layout");
  if (model.description) dropped.push("description");
  if (dropped.length > 0) warnings.push(`DRN has no place for: ${dropped.join(", ")}`);
  return { text: `${out.join("\n")}\n`, warnings };
}
