/**
 * DRN, the explicit text format of the Storm probabilistic model checker: `parseDrn` reads an MDP or a
 * DTMC into a FiniteModel, `formatDrn` writes a FiniteModel as an MDP. Sources for the grammar:
 * Storm's documentation page "DRN input format", its parser
 * (moves-rwth/storm src/storm-parsers/parser/DirectEncodingParser.cpp) and its exporter
 * (src/storm/io/DirectEncodingExporter.cpp).
 *
 * Grammar supported (one item per line; `<ws>` is spaces or tabs; line numbers count every line):
 *
 *   file      := header* "@model" body
 *   header    := blank | comment
 *              | "@type:" ("MDP" | "DTMC")                     required, before @model
 *              | "@value_type:" ("double" | "exact")           optional; interval/parametric refused
 *              | "@parameters" NL <empty line>                 a non-empty parameter line is refused
 *              | "@placeholders" NL ("$" name ":" value NL)*   until the next "@" line
 *              | "@reward_models" NL name (<ws> name)*         names without whitespace; may be empty
 *              | "@nr_states" NL int                           required, before @model
 *              | "@nr_choices" NL int                          optional; when given it must match
 *   comment   := "//" anything                                 on its own line
 *   body      := (state choice*)*                              states 0 .. nr_states-1, in order
 *   state     := "state" <ws> id [<ws> rewards] (<ws> label)*
 *   rewards   := "[" value ("," value)* "]"                    one per reward model, in header order
 *   label     := bare | '"' chars without '"' '"'             bare = no whitespace, no '"'
 *   choice    := <ws> "action" <ws> name [<ws> rewards] [anything, ignored with a warning] NL
 *                (<ws> target <ws>? ":" <ws>? value NL)+
 *   value     := decimal (e.g. 0.25, 1e-3) | fraction a/b (the "exact" value type) | "$" placeholder
 *
 * A comment line right after a state line (before its first action) names the state: Storm writes a
 * state's variable valuation there, and `formatDrn` writes the state label there.
 * Comment lines `// gapwatch-drn: <key> <value>` in the header (keys `name`, `gamma`, `horizon`,
 * `start <state> <p>`) carry what DRN has no place for; other tools skip them as comments.
 *
 * Mapping (FiniteModel <-> DRN):
 *  - every designer feature is a reward model of the same name; the intent is the reward model named
 *    by `intentRewardModel` (default "intent"); each named potential is a reward model
 *    `potential.<name>` with state rewards Phi(s) and zero choice rewards (on import, a `potential.*`
 *    model with any non-zero choice reward is read as a feature instead). Reward models in the file
 *    beyond the named ones are called `rew<i>`, as Storm does.
 *  - labels: `init` marks start states (uniform over them unless `start` comments give the weights),
 *    `terminalLabel` (default "terminal") marks terminal states, `group:<name>` gives a state's group.
 *    Other labels are dropped with a warning.
 *  - choices: a choice's name is its action. The model's actions are all names in order of first
 *    appearance; a state that lacks an action gets a copy of its first choice (a duplicate choice
 *    changes no optimal value), with a warning. DTMCs have one choice per state.
 *  - rewards: DRN attaches rewards to states and to choices, not to outcomes. On import, every outcome
 *    of a choice gets state reward + choice reward. On export, a feature's (and the intent's) choice
 *    reward is its expectation over the choice's outcomes, sum_o p_o x_o, and state rewards are 0
 *    (except potentials). Values and optimal policies depend only on this expected one-step reward,
 *    so solving is exact; what is lost is per-outcome evidence (e.g. a loop that pays only on one of
 *    its outcomes looks like a loop that pays a little on every outcome), which the export reports in
 *    its warnings for every feature whose outcomes differ within some state-action.
 *  - terminals: written as states whose every action is a self-loop with probability 1 and zero
 *    rewards, labelled `terminal`; read back as terminal (the builder writes the self-loops itself and
 *    drops anything else the file gave them, with a warning). Storm computes undiscounted total reward,
 *    which stays finite on such absorbing zero-reward states. Unlabelled absorbing zero-reward states
 *    stay non-terminal (same values; sampled episodes do not end there), with a warning.
 *  - outcomes of a state-action that lead to the same state are merged (Storm wants one entry per
 *    target, targets ascending); the distribution is unchanged.
 *  - numbers: decimals are read as doubles, fractions a/b as the nearest double to a/b; probabilities
 *    of a choice must sum to 1 within the builder's tolerance. Export writes the shortest decimal that
 *    reads back to the same double.
 *  - DRN has no discount: gamma comes from the option, else the `gamma` comment, else 1 (undiscounted,
 *    what the model checker computes), with a warning.
 *
 * Every error is an InputError with a `drn.*` code, `where` = "<file>:<line>".
 */
import { readFileSync } from "node:fs";
import { InputError } from "../errors.js";
import { PROB_TOLERANCE } from "./builder.js";
import { buildModel } from "./drn-build.js";
import { DRN_TERMINAL, META, type Choice, type DrnImport, type DrnParseOptions, type StateRec } from "./drn-types.js";

// Options, results and the names gapwatch reads in a DRN file live in drn-types.ts; the model is built in drn-build.ts.
export { DRN_GROUP_PREFIX, DRN_INIT, DRN_INTENT, DRN_POTENTIAL_PREFIX, DRN_TERMINAL, META } from "./drn-types.js";
export type { DrnExport, DrnExportOptions, DrnImport, DrnParseOptions } from "./drn-types.js";

/** Read a DRN file from disk (see `parseDrn`). */
export function loadDrnFile(file: string, opts: DrnParseOptions = {}): DrnImport {
  let text: string;
  try {
    text = readFileSync(file, "utf8");
  } catch (e) {
    throw new InputError("drn.read", `cannot read DRN file: ${(e as Error).message}`, file);
  }
  return parseDrn(text, file, opts);
}

/** Parse the text of a DRN file; `file` names it in messages and becomes the model's `source`. */
export function parseDrn(text: string, file: string, opts: DrnParseOptions = {}): DrnImport {
  const lines = text.split(/\r?\n/);
  const fail = (code: string, line: number, msg: string): never => {
    throw new InputError(`drn.${code}`, msg, `${file}:${line}`);
  };
  const warnings: string[] = [];

  // ---- header
  let type: "MDP" | "DTMC" | undefined;
  let nStates: number | undefined;
  let nChoices: number | undefined;
  let nChoicesLine = 0;
  let rewardNames: string[] = [];
  const placeholders = new Map<string, number>();
  const meta: { name?: string; gamma?: number; horizon?: number; start: Map<number, number> } = { start: new Map() };
  let i = 0;
  /** The line after a section keyword (empty string at end of file). */
  const nextLine = (): string => (i + 1 < lines.length ? lines[++i] : "");
  const intLine = (what: string): number => {
    const t = nextLine().trim();
    if (!/^\d+$/.test(t)) fail("number", i + 1, `${what} must be followed by a non-negative integer on the next line, got "${t}"`);
    return Number(t);
  };
  let sawModel = false;
  for (; i < lines.length; i++) {
    const line = lines[i].trim();
    const ln = i + 1;
    if (line === "") continue;
    if (line.startsWith(META)) {
      readMeta(line.slice(META.length).trim(), ln, meta, fail);
      continue;
    }
    if (line.startsWith("//")) continue;
    if (line.startsWith("@type:")) {
      const t = line.slice(6).trim();
      if (t !== "MDP" && t !== "DTMC") fail("type", ln, `model type "${t}" is not supported; gapwatch reads MDP and DTMC`);
      type = t as "MDP" | "DTMC";
    } else if (line.startsWith("@value_type:")) {
      const t = line.slice(12).trim();
      if (t !== "double" && t !== "exact") fail("valueType", ln, `value type "${t}" is not supported; gapwatch reads double and exact`);
    } else if (line === "@parameters") {
      const p = nextLine().trim();
      if (p !== "" && !p.startsWith("@")) fail("parametric", i + 1, `parametric models are not supported (parameters: ${p})`);
      if (p.startsWith("@")) i--;
    } else if (line === "@placeholders") {
      while (i + 1 < lines.length && !lines[i + 1].trim().startsWith("@")) {
        const p = lines[++i].trim();
        if (p === "" || p.startsWith("//")) continue;
        const m = /^\$(\S+)\s*:\s*(\S+)$/.exec(p);
        if (!m) fail("placeholder", i + 1, `placeholder lines look like "$name : value", got "${p}"`);
        if (placeholders.has(m![1])) fail("placeholder", i + 1, `placeholder $${m![1]} is defined twice`);
        placeholders.set(m![1], parseValue(m![2], i + 1, placeholders, fail));
      }
    } else if (line === "@reward_models") {
      const t = nextLine().trim();
      if (t.startsWith("@")) i--;
      else rewardNames = t === "" ? [] : t.split(/\s+/);
    } else if (line === "@nr_states") {
      nStates = intLine("@nr_states");
      if (nStates === 0) fail("number", i + 1, "@nr_states must be at least 1");
    } else if (line === "@nr_choices") {
      nChoices = intLine("@nr_choices");
      nChoicesLine = i + 1;
    } else if (line === "@model") {
      if (type === undefined) fail("header", ln, "missing @type (MDP or DTMC) before @model");
      if (nStates === undefined) fail("header", ln, "missing @nr_states before @model");
      sawModel = true;
      i++;
      break;
    } else {
      fail("header", ln, `unexpected line "${clip(line)}" in the header; expected @type, @parameters, @placeholders, @reward_models, @nr_states, @nr_choices or @model`);
    }
  }
  if (!sawModel) fail("header", lines.length, `no @model section${type === undefined ? " (and no @type header): is this a DRN file?" : ""}`);
  const nS = nStates!;

  // ---- body
  const states: StateRec[] = [];
  let cur: StateRec | undefined;
  let choice: Choice | undefined;
  let choiceCount = 0;
  let maxRewards = rewardNames.length;
  let ignoredChoiceText = 0;
  const closeChoice = (): void => {
    if (!choice) return;
    let sum = 0;
    for (const p of choice.prob) sum += p;
    if (Math.abs(sum - 1) > PROB_TOLERANCE) {
      fail("probabilitySum", choice.line, `probabilities of state ${states.length - 1} action ${choice.name} sum to ${sum}, expected 1 (within ${PROB_TOLERANCE})`);
    }
    choice = undefined;
  };
  const closeState = (): void => {
    closeChoice();
    if (cur && cur.choices.length === 0 && !cur.labels.includes(opts.terminalLabel ?? DRN_TERMINAL)) {
      fail("noChoice", cur.line, `state ${states.length - 1} has no action; every state needs at least one (or the label ${opts.terminalLabel ?? DRN_TERMINAL})`);
    }
  };
  for (; i < lines.length; i++) {
    const raw = lines[i];
    const line = raw.trim();
    const ln = i + 1;
    if (line === "") continue;
    if (line.startsWith("//")) {
      if (cur && cur.choices.length === 0 && cur.name === undefined) cur.name = line.slice(2).trim();
      continue;
    }
    if (/^state(\s|$)/.test(line)) {
      closeState();
      const m = /^state\s+(\S+)\s*(.*)$/.exec(line);
      if (!m || !/^\d+$/.test(m[1])) fail("number", ln, `state lines look like "state <index> [rewards] labels", got "${clip(line)}"`);
      const id = Number(m![1]);
      if (id >= nS) fail("stateIndex", ln, `state ${id} is outside 0..${nS - 1} (@nr_states is ${nS})`);
      if (id !== states.length) fail("stateOrder", ln, `states must be listed in order without gaps: expected state ${states.length}, got ${id}`);
      let rest = m![2];
      let rewards: number[] = [];
      if (rest.startsWith("[")) {
        [rewards, rest] = readRewards(rest, ln, placeholders, fail);
        maxRewards = Math.max(maxRewards, rewards.length);
      }
      cur = { line: ln, rewards, labels: readLabels(rest, ln, fail), choices: [] };
      states.push(cur);
    } else if (/^action(\s|$)/.test(line)) {
      if (!cur) fail("syntax", ln, `action line before the first state line`);
      closeChoice();
      const m = /^action\s+(\S+)\s*(.*)$/.exec(line);
      if (!m) fail("syntax", ln, `action lines look like "action <name> [rewards]", got "${clip(line)}"`);
      choiceCount++;
      if (nChoices !== undefined && choiceCount > nChoices) fail("choiceCount", ln, `more choices than @nr_choices declares (${nChoices})`);
      if (type === "DTMC" && cur!.choices.length > 0) fail("choiceCount", ln, `a DTMC has one action per state; state ${states.length - 1} has more`);
      let rest = m![2];
      let rewards: number[] = [];
      if (rest.startsWith("[")) {
        [rewards, rest] = readRewards(rest, ln, placeholders, fail);
        maxRewards = Math.max(maxRewards, rewards.length);
      }
      if (rest.trim() !== "") ignoredChoiceText++;
      if (m![1] === "__proto__") fail("name", ln, `action name "__proto__" is not allowed`);
      choice = { name: m![1], line: ln, rewards, next: [], prob: [] };
      cur!.choices.push(choice);
    } else {
      const m = /^(\S+?)\s*:\s*(\S+)$/.exec(line);
      if (!m) fail("syntax", ln, `expected a state, action or transition line "<target> : <probability>", got "${clip(line)}"`);
      if (!choice) fail("syntax", ln, `transition line before the first action line of its state`);
      if (!/^\d+$/.test(m![1])) fail("number", ln, `transition target "${m![1]}" is not a state index`);
      const target = Number(m![1]);
      if (target >= nS) fail("stateIndex", ln, `target state ${target} is outside 0..${nS - 1} (@nr_states is ${nS})`);
      const p = parseValue(m![2], ln, placeholders, fail);
      if (!(p >= 0 && p <= 1 + PROB_TOLERANCE)) fail("probability", ln, `probability ${m![2]} is outside [0, 1]`);
      choice!.next.push(target);
      choice!.prob.push(p);
    }
  }
  closeState();
  if (states.length !== nS) fail("stateCount", lines.length, `@nr_states declares ${nS} states, the file lists ${states.length}`);
  if (nChoices !== undefined && choiceCount !== nChoices) {
    fail("choiceCount", nChoicesLine, `@nr_choices declares ${nChoices} choices, the file lists ${choiceCount}`);
  }
  if (ignoredChoiceText > 0) warnings.push(`text after the rewards of ${ignoredChoiceText} action line(s) (choice labels) was ignored`);

  return { model: buildModel(file, opts, states, rewardNames, maxRewards, meta, warnings), warnings };
}

type Fail = (code: string, line: number, msg: string) => never;

function clip(s: string): string {
  return s.length > 60 ? `${s.slice(0, 57)}...` : s;
}

const DECIMAL = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/;
const FRACTION = /^([+-]?\d+)\/(\d+)$/;

/** A decimal, a fraction a/b (read as the nearest double), or a `$placeholder`. */
function parseValue(t: string, ln: number, placeholders: Map<string, number>, fail: Fail): number {
  if (t.startsWith("$")) {
    const v = placeholders.get(t.slice(1));
    if (v === undefined) fail("placeholder", ln, `unknown placeholder ${t}`);
    return v!;
  }
  if (DECIMAL.test(t)) return Number(t);
  const m = FRACTION.exec(t);
  if (m && Number(m[2]) !== 0) return Number(m[1]) / Number(m[2]);
  return fail("number", ln, `bad number "${t}"; expected a decimal such as 0.25 or a fraction such as 1/4`);
}

/** `[v1, v2, ...]` at the start of `rest`; returns the values and the text after `]`. */
function readRewards(rest: string, ln: number, placeholders: Map<string, number>, fail: Fail): [number[], string] {
  const end = rest.indexOf("]");
  if (end < 0) fail("syntax", ln, `"]" missing after the rewards`);
  const inner = rest.slice(1, end).trim();
  const vals = inner === "" ? [] : inner.split(",").map((v) => parseValue(v.trim(), ln, placeholders, fail));
  return [vals, rest.slice(end + 1).trim()];
}

/** Labels separated by whitespace, each bare (no whitespace, no '"') or in double quotes. */
function readLabels(rest: string, ln: number, fail: Fail): string[] {
  const out: string[] = [];
  let k = 0;
  while (k < rest.length) {
    if (/\s/.test(rest[k])) {
      k++;
      continue;
    }
    if (rest[k] === '"') {
      const end = rest.indexOf('"', k + 1);
      if (end < 0) fail("label", ln, `unterminated quoted label ${clip(rest.slice(k))}`);
      if (end === k + 1) fail("label", ln, `empty quoted label ""`);
      if (end + 1 < rest.length && !/\s/.test(rest[end + 1])) fail("label", ln, `a quoted label must be followed by whitespace: ${clip(rest.slice(k))}`);
      out.push(rest.slice(k + 1, end));
      k = end + 1;
      continue;
    }
    let end = k;
    while (end < rest.length && !/\s/.test(rest[end])) end++;
    const word = rest.slice(k, end);
    if (word.includes('"')) fail("label", ln, `label ${word} has a stray '"'; quote a whole label: "my label"`);
    if (word.startsWith("[")) fail("label", ln, `rewards "${clip(word)}" must come before the labels`);
    out.push(word);
    k = end;
  }
  return out;
}

function readMeta(body: string, ln: number, meta: { name?: string; gamma?: number; horizon?: number; start: Map<number, number> }, fail: Fail): void {
  const sp = body.indexOf(" ");
  const key = sp < 0 ? body : body.slice(0, sp);
  const value = sp < 0 ? "" : body.slice(sp + 1).trim();
  const num = (t: string): number => {
    if (!DECIMAL.test(t)) fail("number", ln, `bad number "${t}" in a gapwatch-drn comment`);
    return Number(t);
  };
  if (key === "name") meta.name = value;
  else if (key === "gamma") meta.gamma = num(value);
  else if (key === "horizon") meta.horizon = num(value);
  else if (key === "start") {
    const [s, p] = value.split(/\s+/);
    if (!/^\d+$/.test(s ?? "")) fail("number", ln, `start comments look like "start <state> <probability>", got "${value}"`);
    meta.start.set(Number(s), num(p ?? ""));
  }
}

// ---------------------------------------------------------------------------------------------------
// Export
