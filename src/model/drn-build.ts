/**
 * The second half of the DRN reader (drn.ts): the parsed states, choices, rewards and labels turned
 * into a FiniteModel (reward models to features and intent, labels to terminal states, starts and
 * groups), with the same `drn.*` errors and warnings. Pure; no I/O.
 */
import { InputError } from "../errors.js";
import { basename } from "node:path";
import { ModelBuilder } from "./builder.js";
import { DEFAULT_HORIZON } from "./format/schema.js";
import type { FiniteModel } from "./types.js";
import { DRN_GROUP_PREFIX, DRN_INIT, DRN_INTENT, DRN_POTENTIAL_PREFIX, DRN_TERMINAL, type Choice, type DrnParseOptions, type StateRec } from "./drn-types.js";

export function buildModel(
  file: string,
  opts: DrnParseOptions,
  states: StateRec[],
  declaredNames: string[],
  nRewards: number,
  meta: { name?: string; gamma?: number; horizon?: number; start: Map<number, number> },
  warnings: string[],
): FiniteModel {
  const nS = states.length;
  const intentName = opts.intentRewardModel ?? DRN_INTENT;
  const terminalLabel = opts.terminalLabel ?? DRN_TERMINAL;
  const rewardNames = Array.from({ length: nRewards }, (_, j) => declaredNames[j] ?? `rew${j}`);
  const where = `${file}:1`;
  const seen = new Set<string>();
  for (const n of rewardNames) {
    if (seen.has(n)) throw new InputError("drn.rewardModel", `reward model "${n}" is declared twice in @reward_models`, where);
    if (n.includes("__proto__")) throw new InputError("drn.name", `reward model name "${n}" is not allowed`, where);
    seen.add(n);
  }
  const stateReward = (s: number, j: number): number => states[s].rewards[j] ?? 0;
  const choiceReward = (c: Choice, j: number): number => c.rewards[j] ?? 0;

  // Reward models -> features, intent, potentials.
  const featureCols: number[] = [];
  const potentialCols: { name: string; col: number }[] = [];
  let intentCol = -1;
  rewardNames.forEach((n, j) => {
    if (n === intentName) intentCol = j;
    else if (n.startsWith(DRN_POTENTIAL_PREFIX) && n.length > DRN_POTENTIAL_PREFIX.length && states.every((st) => st.choices.every((c) => choiceReward(c, j) === 0))) {
      potentialCols.push({ name: n.slice(DRN_POTENTIAL_PREFIX.length), col: j });
    } else featureCols.push(j);
  });
  if (intentCol < 0) warnings.push(`no reward model named "${intentName}": the intent is 0 everywhere (name the intent's reward model with the intent option)`);

  // Labels -> start, terminal, groups.
  const starts: number[] = [];
  const terminal = new Uint8Array(nS);
  const groups: (string | null)[] = new Array(nS).fill(null);
  const dropped = new Set<string>();
  states.forEach((st, s) => {
    for (const l of st.labels) {
      if (l === DRN_INIT) starts.push(s);
      else if (l === terminalLabel) terminal[s] = 1;
      else if (l.startsWith(DRN_GROUP_PREFIX) && l.length > DRN_GROUP_PREFIX.length) {
        if (groups[s] !== null) throw new InputError("drn.label", `state ${s} has two group labels (${DRN_GROUP_PREFIX}${groups[s]} and ${l})`, `${file}:${st.line}`);
        groups[s] = l.slice(DRN_GROUP_PREFIX.length);
        if (groups[s] === "__proto__") throw new InputError("drn.name", `group name "__proto__" is not allowed`, `${file}:${st.line}`);
      } else dropped.add(l);
    }
  });
  if (starts.length === 0) throw new InputError("drn.init", `no state carries the label "${DRN_INIT}"; label the start state(s) init`, where);
  if (dropped.size > 0) {
    const list = [...dropped].slice(0, 5).map((l) => JSON.stringify(l)).join(", ");
    warnings.push(`${dropped.size} label(s) with no meaning in gapwatch were dropped: ${list}${dropped.size > 5 ? ", ..." : ""}`);
  }

  // Actions: all choice names in order of first appearance; repeated names within a state get a suffix.
  const actions: string[] = [];
  const actionIndex = new Map<string, number>();
  let renamed = 0;
  for (const st of states) {
    const inState = new Set<string>();
    for (const c of st.choices) {
      if (inState.has(c.name)) {
        let k = 2;
        while (inState.has(`${c.name}.${k}`)) k++;
        c.name = `${c.name}.${k}`;
        renamed++;
      }
      inState.add(c.name);
      if (!actionIndex.has(c.name)) {
        actionIndex.set(c.name, actions.length);
        actions.push(c.name);
      }
    }
  }
  if (renamed > 0) warnings.push(`${renamed} choice(s) repeat an action name within their state and were renamed <name>.<k>`);

  const gamma = opts.gamma ?? meta.gamma ?? 1;
  if (opts.gamma === undefined && meta.gamma === undefined) warnings.push("DRN has no discount: gamma is 1 (undiscounted total reward); pass a gamma to discount");
  const names = states.map((st, s) => st.name || String(s));
  const b = new ModelBuilder({
    name: opts.name ?? meta.name ?? basename(file).replace(/\.drn$/i, ""),
    nStates: nS,
    actions: actions.length > 0 ? actions : ["0"],
    features: featureCols.map((j) => rewardNames[j]),
    gamma,
    horizon: opts.horizon ?? meta.horizon ?? DEFAULT_HORIZON,
    stateLabels: names,
    source: file,
  });
  const nF = featureCols.length;
  const fv = new Float64Array(nF);
  let filled = 0;
  let droppedTerminal = 0;
  states.forEach((st, s) => {
    if (terminal[s]) {
      b.setTerminal(s);
      const loopsOnly = st.choices.every((c) => c.next.every((t) => t === s));
      const zero = rewardNames.every((_, j) => stateReward(s, j) === 0 && st.choices.every((c) => choiceReward(c, j) === 0));
      if (!loopsOnly || !zero) droppedTerminal++;
      return;
    }
    const byName = new Map(st.choices.map((c) => [c.name, c] as const));
    actions.forEach((name, a) => {
      let c = byName.get(name);
      if (!c) {
        c = st.choices[0];
        filled++;
      }
      featureCols.forEach((j, f) => (fv[f] = stateReward(s, j) + choiceReward(c!, j)));
      const intent = intentCol >= 0 ? stateReward(s, intentCol) + choiceReward(c, intentCol) : 0;
      for (let o = 0; o < c.next.length; o++) b.addOutcome(s, a, c.next[o], c.prob[o], fv, intent);
    });
  });
  let absorbing = 0;
  states.forEach((st, s) => {
    if (terminal[s]) return;
    const loops = st.choices.every((c) => c.next.every((t) => t === s));
    if (loops && rewardNames.every((_, j) => stateReward(s, j) === 0 && st.choices.every((c) => choiceReward(c, j) === 0))) absorbing++;
  });
  if (absorbing > 0) {
    warnings.push(`${absorbing} absorbing zero-reward state(s) are not labelled ${terminalLabel}; values are the same, but sampled episodes run on there until the horizon (name their label with the terminal-label option)`);
  }
  if (filled > 0) warnings.push(`${filled} state-action pair(s) missing from their state were filled with a copy of that state's first choice (optimal values unchanged)`);
  if (droppedTerminal > 0) warnings.push(`${droppedTerminal} state(s) labelled ${terminalLabel} had transitions or rewards other than zero-reward self-loops; they are absorbing with zero reward now`);

  // Start distribution: uniform over init states unless the comments give weights.
  if (meta.start.size > 0) {
    for (const [s, p] of meta.start) {
      if (s >= nS) throw new InputError("drn.stateIndex", `start state ${s} in a gapwatch-drn comment is outside 0..${nS - 1}`, where);
      b.setStart(s, p);
    }
  } else for (const s of starts) b.setStart(s, 1 / starts.length);
  if (groups.some((g) => g !== null)) b.setGroups(groups);
  for (const { name, col } of potentialCols) {
    b.setPotential(name, Float64Array.from(states, (_, s) => stateReward(s, col)));
  }
  const model = b.build();
  if (potentialCols.length > 0) {
    // setPotential collects into a plain object; rebuild it without a prototype (names are user data).
    const potentials: Record<string, Float64Array> = Object.create(null);
    for (const [k, v] of Object.entries(model.potentials ?? {})) potentials[k] = v;
    return { ...model, potentials };
  }
  return model;
}
