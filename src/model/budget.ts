/**
 * The budget family: `budget` units of one shared resource are handed out, one unit per step, among
 * several attributes; compiled to a FiniteModel.
 *
 * State = the allocation so far, a vector x (x_k >= 0 units given to attribute k, sum x <= budget),
 * plus one terminal state `closed`. Allocations that use the whole budget are terminal too.
 * Actions, in index order: `give:<attribute>` for each attribute (assign the next unit to it), then
 * `close` (stop and leave the rest of the budget unused; goes to `closed`).
 *
 * Returns are concave per attribute: attribute k with x_k units is worth f(x_k), with f one of
 *   sqrt     f(x) = sqrt(x)
 *   log1p    f(x) = ln(1 + x)
 * so giving the next unit to k yields the increment f(x_k + 1) - f(x_k), which shrinks as x_k grows.
 *
 * Events per transition (the vocabulary of `features` and `intentWeights` in scenario.json):
 *   <attribute>   the return increment of the unit given to that attribute (0 on other transitions)
 *   unit          1 when a unit is given
 *   close         1 when the budget is closed early
 *
 * A designer reward that weights only some attributes pulls every unit toward them; an intent that
 * weights all of them is best served by the allocation that equalizes weighted marginal returns (see
 * `optimalAllocation`). No discounting is needed for that: with increments that shrink, handing out the
 * largest weighted increment first is optimal for any gamma in (0, 1], and ends at the same allocation.
 *
 * Pure: `compileBudget` does no I/O; `compileBudgetScenario` only names the file for messages.
 */
import { join } from "node:path";
import { InputError } from "../errors.js";
import { ModelBuilder } from "./builder.js";
import type { ScenarioMeta } from "./scenario.js";
import type { FiniteModel } from "./types.js";

export const BUDGET_RETURNS = ["sqrt", "log1p"] as const;
export type BudgetReturns = (typeof BUDGET_RETURNS)[number];

const RESERVED = new Set(["unit", "close", "__proto__", "constructor", "prototype"]);

/** The family-specific keys of a budget scenario.json. */
export interface BudgetConfig {
  name?: string;
  /** Attribute names, in action and feature order (at least two). */
  attributes: string[];
  /** Units of the shared resource (>= 1). */
  budget: number;
  /** Per-attribute return curve. Default "sqrt". */
  returns?: BudgetReturns;
  gamma: number;
  horizon: number;
  /** Designer-visible event names (attributes, `unit`, `close`), in feature order. */
  features: string[];
  /** Held-out intent: weight per event name. */
  intentWeights: Record<string, number>;
}

export interface BudgetSpec {
  name: string;
  attributes: string[];
  budget: number;
  returns: BudgetReturns;
  gamma: number;
  horizon: number;
  features: string[];
  intentWeights: Map<string, number>;
}

function fail(key: string, message: string, source: string): never {
  throw new InputError(`budget.${key.replace(/[[.].*$/, "")}`, message, `${source} $.${key}`);
}

function isInt(x: unknown): x is number {
  return typeof x === "number" && Number.isInteger(x);
}

/** f(x) of the named return curve. */
export function budgetReturn(kind: BudgetReturns, x: number): number {
  return kind === "sqrt" ? Math.sqrt(x) : Math.log1p(x);
}

/** Validate a raw config (parsed JSON). Throws InputError "budget.<key>" naming `source` and the key. */
export function validateBudgetConfig(config: unknown, source: string): BudgetSpec {
  if (typeof config !== "object" || config === null || Array.isArray(config)) {
    throw new InputError("budget.config", "a budget scenario must be a JSON object", source);
  }
  const c = config as Record<string, unknown>;
  const attrs = c.attributes;
  if (!Array.isArray(attrs) || attrs.length < 2) fail("attributes", "attributes must be an array of at least two names", source);
  const seen = new Set<string>();
  attrs.forEach((a, i) => {
    if (typeof a !== "string" || !/^[a-z][a-z0-9-]*$/.test(a)) fail(`attributes[${i}]`, `attribute names are lower-case words (a-z, 0-9, -), got ${JSON.stringify(a)}`, source);
    if (RESERVED.has(a)) fail(`attributes[${i}]`, `"${a}" is reserved; choose another attribute name`, source);
    if (seen.has(a)) fail(`attributes[${i}]`, `attribute "${a}" is listed twice`, source);
    seen.add(a);
  });
  const budget = c.budget;
  if (!isInt(budget) || budget < 1 || budget > 64) fail("budget", `budget must be an integer in 1..64 (units to hand out), got ${JSON.stringify(budget)}`, source);
  const returns = c.returns ?? "sqrt";
  if (typeof returns !== "string" || !(BUDGET_RETURNS as readonly string[]).includes(returns)) {
    fail("returns", `returns must be one of ${BUDGET_RETURNS.join(", ")}, got ${JSON.stringify(c.returns)}`, source);
  }
  const gamma = c.gamma;
  if (typeof gamma !== "number" || !(gamma > 0 && gamma <= 1)) fail("gamma", `gamma must be in (0, 1], got ${JSON.stringify(gamma)}`, source);
  const horizon = c.horizon;
  if (!isInt(horizon) || horizon < budget) fail("horizon", `horizon must be an integer >= budget (${budget}), got ${JSON.stringify(horizon)}`, source);
  const known = [...(attrs as string[]), "unit", "close"];
  const features = c.features;
  if (!Array.isArray(features) || features.length < 1) fail("features", `features must be a non-empty array of event names (${known.join(", ")})`, source);
  const fseen = new Set<string>();
  features.forEach((f, i) => {
    if (typeof f !== "string" || !known.includes(f)) fail(`features[${i}]`, `unknown event ${JSON.stringify(f)}; known events: ${known.join(", ")}`, source);
    if (fseen.has(f)) fail(`features[${i}]`, `event "${f}" is listed twice`, source);
    fseen.add(f);
  });
  const iw = c.intentWeights;
  if (typeof iw !== "object" || iw === null || Array.isArray(iw)) fail("intentWeights", "intentWeights must be an object mapping event names to numbers", source);
  const intentWeights = new Map<string, number>();
  for (const [k, w] of Object.entries(iw as Record<string, unknown>)) {
    if (!known.includes(k)) fail(`intentWeights.${k}`, `unknown event "${k}"; known events: ${known.join(", ")}`, source);
    if (typeof w !== "number" || !Number.isFinite(w)) fail(`intentWeights.${k}`, `weight must be a finite number, got ${JSON.stringify(w)}`, source);
    intentWeights.set(k, w);
  }
  return {
    name: typeof c.name === "string" && c.name ? c.name : "budget",
    attributes: [...(attrs as string[])],
    budget,
    returns: returns as BudgetReturns,
    gamma,
    horizon,
    features: [...(features as string[])],
    intentWeights,
  };
}

/** Every allocation of at most `budget` units among `k` attributes, in lexicographic order. */
export function enumerateAllocations(k: number, budget: number): number[][] {
  const out: number[][] = [];
  const cur = new Array<number>(k).fill(0);
  const rec = (i: number, left: number): void => {
    if (i === k) {
      out.push([...cur]);
      return;
    }
    for (let x = 0; x <= left; x++) {
      cur[i] = x;
      rec(i + 1, left - x);
    }
    cur[i] = 0;
  };
  rec(0, budget);
  return out;
}

/**
 * The allocation of `budget` units maximizing sum_k w_k f(x_k) for non-negative weights: hand out units
 * one at a time to the largest weighted increment (ties to the lower index). For concave f this greedy
 * rule is optimal and ends where the weighted marginal returns are equalized as far as whole units allow
 * (the Karush-Kuhn-Tucker condition of the separable concave resource-allocation problem).
 */
export function optimalAllocation(kind: BudgetReturns, weights: readonly number[], budget: number): number[] {
  const x = new Array<number>(weights.length).fill(0);
  for (let u = 0; u < budget; u++) {
    let best = -1;
    let bestGain = 0;
    for (let k = 0; k < weights.length; k++) {
      const gain = weights[k] * (budgetReturn(kind, x[k] + 1) - budgetReturn(kind, x[k]));
      if (gain > bestGain) {
        best = k;
        bestGain = gain;
      }
    }
    if (best < 0) break;
    x[best]++;
  }
  return x;
}

/** Compile a budget config (parsed scenario.json or a test literal). `source` names the file for errors. */
export function compileBudget(config: BudgetConfig | Record<string, unknown>, source: string): FiniteModel {
  const spec = validateBudgetConfig(config, source);
  const K = spec.attributes.length;
  const B = spec.budget;
  const allocs = enumerateAllocations(K, B);
  const index = new Map<string, number>();
  allocs.forEach((x, s) => index.set(x.join(","), s));
  const closed = allocs.length;
  const nS = allocs.length + 1;
  const actions = [...spec.attributes.map((a) => `give:${a}`), "close"];
  const events = [...spec.attributes, "unit", "close"];
  const evIdx = new Map<string, number>(events.map((e, i) => [e, i]));
  const featIdx = spec.features.map((f) => evIdx.get(f)!);
  const iw = new Float64Array(events.length);
  for (const [k, w] of spec.intentWeights) iw[evIdx.get(k)!] = w;

  const labels = allocs.map((x) => x.map((v, k) => `${spec.attributes[k]}=${v}`).join(" "));
  labels.push("closed");
  const b = new ModelBuilder({ name: spec.name, nStates: nS, actions, features: spec.features, gamma: spec.gamma, horizon: spec.horizon, stateLabels: labels, source });
  b.setTerminal(closed);
  const ev = new Float64Array(events.length);
  const fv = new Float64Array(featIdx.length);
  const add = (s: number, a: number, next: number): void => {
    for (let f = 0; f < featIdx.length; f++) fv[f] = ev[featIdx[f]];
    let intent = 0;
    for (let e = 0; e < ev.length; e++) intent += iw[e] * ev[e];
    b.addOutcome(s, a, next, 1, fv, intent);
  };
  const obs = new Float64Array(nS * (K + 1));
  allocs.forEach((x, s) => {
    let used = 0;
    for (let k = 0; k < K; k++) {
      used += x[k];
      obs[s * (K + 1) + k] = x[k] / B;
    }
    obs[s * (K + 1) + K] = (B - used) / B;
    if (used === B) {
      b.setTerminal(s);
      return;
    }
    for (let k = 0; k < K; k++) {
      ev.fill(0);
      ev[k] = budgetReturn(spec.returns, x[k] + 1) - budgetReturn(spec.returns, x[k]);
      ev[K] = 1;
      const y = [...x];
      y[k]++;
      add(s, k, index.get(y.join(","))!);
    }
    ev.fill(0);
    ev[K + 1] = 1;
    add(s, K, closed);
  });
  b.setStart(0, 1);
  b.setObservations([...spec.attributes.map((a) => `${a}/budget`), "left/budget"], obs);
  return b.build();
}

/** Compile envs/<name>/scenario.json (already parsed into `meta`) of family "budget". */
export function compileBudgetScenario(dir: string, meta: ScenarioMeta): FiniteModel {
  return compileBudget({ ...meta, name: meta.name }, join(dir, "scenario.json"));
}
