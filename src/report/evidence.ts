/**
 * Audit evidence as a reader reads it: each item a short sentence ("Intent of the designer-optimal
 * policy: -0.9964."), never a raw key or a JSON array. Known keys get their own words; any other key
 * is split into lower-case words. State id lists are left to the drawing; state and action names are
 * joined with arrows; nested records become "name value" lists. Pure.
 */
import { esc } from "./escape.js";
import { num, regretPct } from "./sections.js";

/** Words for the evidence keys the built-in checks write (src/audit/checks). */
const WORDS: ReadonlyMap<string, string> = new Map([
  ["regret", "intent given up (regret)"],
  ["regretNorm", "share of the achievable intent given up"],
  ["intentOptimal", "intent of the intent-optimal policy"],
  ["intentOfDesignerOptimal", "intent of the designer-optimal policy"],
  ["intentOfRandom", "intent of uniform-random behaviour"],
  ["designerOfDesignerOptimal", "designer return of the designer-optimal policy"],
  ["designerOfIntentOptimal", "designer return of the intent-optimal policy"],
  ["designerOfTask", "designer return of doing the task"],
  ["thresholds", "severity thresholds"],
  ["threshold", "threshold"],
  ["firstDivergence", "where the designer-optimal policy first departs"],
  ["designerAction", "designer-optimal move"],
  ["intentAction", "intended move"],
  ["intentOfDesignerAction", "intent of the designer-optimal move"],
  ["intentOfIntentAction", "intent of the intended move"],
  ["omittedFeatures", "features the reward leaves out"],
  ["fixAt", "weight that would fix it"],
  ["discountedStepsDesignerOptimal", "discounted steps of the designer-optimal policy"],
  ["discountedStepsTask", "discounted steps of doing the task"],
  ["exitProbability", "probability of ending early"],
  ["exitStates", "where it ends early"],
  ["designerOptimalIdlesAt", "where the designer-optimal policy stands still"],
  ["designerPerStep", "designer reward per step"],
  ["idleAction", "standing-still move"],
  ["idleState", "standing-still state"],
  ["taskDesignerPerStep", "designer reward per step of doing the task"],
  ["taskIntentPerStep", "intent per step of doing the task"],
  ["taskDiscountedSteps", "discounted steps of doing the task"],
  ["gap", "gap between the worst and best served groups"],
  ["groups", "start groups"],
  ["group", "group"],
  ["starts", "start states"],
  ["startWeight", "share of starts"],
  ["worst", "worst served group"],
  ["loop", "loop"],
  ["actions", "moves"],
  ["states", "states"],
  ["lapProbability", "probability of completing a lap"],
  ["length", "steps per lap"],
  ["meanDesignerPerStep", "designer reward per step"],
  ["meanIntentPerStep", "intent per step"],
  ["riddenByDesignerOptimal", "taken by the designer-optimal policy"],
  ["catastrophicStates", "catastrophic states in the model"],
  ["failProbability", "failure probability of the designer-optimal route"],
  ["failValueNeeded", "designer value a failure would need to refuse the risk"],
  ["indifferenceKind", "kind of indifference"],
  ["indifferenceProbability", "failure probability at which the reward is indifferent"],
  ["maxRisk", "tolerated failure probability"],
  ["returnIfFail", "designer return when it fails"],
  ["returnIfOk", "designer return when it succeeds"],
  ["riskyReturn", "designer return of the risky route"],
  ["riskyRoute", "risky route (designer-optimal)"],
  ["safeRoute", "safe route (intent-optimal)"],
  ["safeFailProbability", "failure probability of the safe route"],
  ["safePolicy", "safe policy"],
  ["safeReturn", "designer return of the safe route"],
  ["feature", "feature"],
  ["weight", "weight"],
  ["intentPerStep", "intent per step"],
  ["termPerStep", "shaping term per step"],
  ["distance", "distance to the edge"],
  ["okAtCurrent", "intent-optimal at the current weight"],
  ["probes", "exact solves tried"],
  ["searched", "weights tried"],
  ["lo", "lowest weight that keeps it"],
  ["hi", "highest weight that keeps it"],
  ["critical", "critical at"],
  ["warning", "warning at"],
  ["state", "state"],
  ["step", "step"],
  ["pathStates", "route until it departs"],
  ["givenUp", "where it gives up intent the intended route keeps"],
]);

/** Keys that hold state or outcome indices: drawn on the map, not written out. */
const DRAWN = /^(stateIds?|actionIds|outcomes|idleStateId|pathStates|riskyRoute|safeRoute)$/;

/** Words for an evidence key: the known phrase, else camelCase / snake_case split into lower-case words. */
export function keyWords(key: string): string {
  const known = WORDS.get(key);
  if (known !== undefined) return known;
  return key
    .replace(/([a-z0-9])([A-Z])/g, "$1 $2")
    .replace(/[_-]+/g, " ")
    .toLowerCase()
    .trim();
}

function scalar(key: string, v: unknown): string {
  if (v === null || v === undefined) return "none";
  if (typeof v === "boolean") return v ? "yes" : "no";
  if (typeof v === "number") {
    if (/regretNorm$/.test(key)) return regretPct(v, 1);
    if (v === Infinity) return "no limit";
    if (v === -Infinity) return "no limit";
    return num(v, 4);
  }
  return String(v);
}

/** A value in words (plain text, not yet escaped). */
export function valueWords(key: string, v: unknown, depth = 0): string {
  if (Array.isArray(v)) {
    if (v.length === 0) return "none";
    if (v.every((x) => x === null || typeof x !== "object")) {
      if (key === "searched" && v.length === 2) return `from ${scalar("", v[0])} to ${scalar("", v[1])}`;
      const sep = /states|actions|route|starts/i.test(key) ? " → " : ", ";
      const shown = v.slice(0, 12).map((x) => scalar(key, x));
      return shown.join(key === "starts" || key === "exitStates" ? ", " : sep) + (v.length > 12 ? ` … (${v.length} in all)` : "");
    }
    return v
      .slice(0, 8)
      .map((x) => valueWords(key, x, depth + 1))
      .join("; ") + (v.length > 8 ? ` … (${v.length} in all)` : "");
  }
  if (v && typeof v === "object") {
    if (depth > 3) return "…";
    const parts = Object.entries(v as Record<string, unknown>)
      .filter(([k]) => !DRAWN.test(k))
      .map(([k, x]) => `${keyWords(k)} ${valueWords(k, x, depth + 1)}`);
    return parts.join(", ");
  }
  return scalar(key, v);
}

/** The evidence of one finding as a list of sentences (safe HTML), or "" when there is nothing to say. */
export function evidenceList(evidence: unknown): string {
  if (!evidence || typeof evidence !== "object" || Array.isArray(evidence)) return "";
  const items = Object.entries(evidence as Record<string, unknown>)
    .filter(([k]) => !DRAWN.test(k))
    .map(([k, v]) => {
      const words = keyWords(k);
      return `<li>${esc(words.charAt(0).toUpperCase() + words.slice(1))}: ${esc(valueWords(k, v))}.</li>`;
    });
  return items.length ? `<ul class="ev">${items.join("")}</ul>` : "";
}

/** A two-column table of settings in words (keys phrased as above, values without JSON), safe HTML. */
export function wordsTable(obj: Record<string, unknown>): string {
  const rows = Object.entries(obj).filter(([, v]) => v !== undefined);
  return `<table class="data"><tbody>${rows.map(([k, v]) => `<tr><th>${esc(keyWords(k))}</th><td class="mono">${esc(valueWords(k, v))}</td></tr>`).join("")}</tbody></table>`;
}
