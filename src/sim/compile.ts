/**
 * Compile a simulator module to a FiniteModel by breadth-first enumeration of its reachable states,
 * using `transitions` (exact) or, for a deterministic module, probing `step`. Bounded by maxStates.
 */
import { GapwatchError, InputError } from "../errors.js";
import { ModelBuilder } from "../model/builder.js";
import type { FiniteModel } from "../model/types.js";
import { createRng } from "../rng/rng.js";
import { DEFAULT_MODULE_GAMMA, DEFAULT_MODULE_HORIZON, type EnvDefinition, type Outcome } from "./define.js";
import { canonicalJson } from "../util/canonical-json.js";

export interface CompileOptions {
  maxStates: number;
  source: string;
}

/** Call user code, turning a throw into one clear line naming the module and what was being done. */
export function guard<T>(source: string, what: string, fn: () => T): T {
  try {
    return fn();
  } catch (e) {
    if (e instanceof GapwatchError) throw e;
    throw new InputError("module.threw", `${what} threw: ${(e as Error)?.message ?? String(e)}`, source);
  }
}

export function checkNumbers(source: string, what: string, features: Record<string, number>, intent: number | undefined, declared: readonly string[]): void {
  for (const [f, v] of Object.entries(features ?? {})) {
    if (!declared.includes(f)) throw new InputError("module.feature", `${what} returned undeclared feature "${f}" (declared: ${declared.join(", ")})`, source);
    if (typeof v !== "number" || !Number.isFinite(v)) throw new InputError("module.nan", `${what} returned feature "${f}" = ${String(v)}; features must be finite numbers`, source);
  }
  if (intent !== undefined && (typeof intent !== "number" || !Number.isFinite(intent))) {
    throw new InputError("module.nan", `${what} returned intent = ${String(intent)}; intent must be a finite number`, source);
  }
}

/**
 * Check what a module's `step` (or one outcome of `transitions`) returned, as the episode wrapper and
 * the compiler both need it: a plain object (not a Promise: steps are synchronous) with a state, a
 * features object when present, and a boolean `terminated` when present. Getters that throw become
 * one line naming the call. Returns a plain copy so later reads do not run user getters again.
 */
export function checkStepResult<S>(source: string, what: string, r: unknown): { state: S; features: Record<string, number>; intent?: number; terminated: boolean; p?: unknown } {
  return guard(source, what, () => {
    if (r !== null && (typeof r === "object" || typeof r === "function") && typeof (r as { then?: unknown }).then === "function") {
      throw new InputError("module.result", `${what} returned a Promise; step must be synchronous and return { state, features, intent, terminated }`, source);
    }
    if (!r || typeof r !== "object") throw new InputError("module.result", `${what} returned ${r === null ? "null" : typeof r}; step must return { state, features, intent, terminated }`, source);
    const o = r as Record<string, unknown>;
    const state = o.state as S;
    if (state === undefined) throw new InputError("module.result", `${what} returned no state; step must return { state, features, intent, terminated }`, source);
    const features = o.features ?? {};
    if (typeof features !== "object" || features === null || Array.isArray(features)) throw new InputError("module.result", `${what} returned features that are not an object of numbers by name`, source);
    const terminated = o.terminated;
    if (terminated !== undefined && typeof terminated !== "boolean") throw new InputError("module.result", `${what} returned terminated = ${String(terminated).slice(0, 40)}; it must be true or false`, source);
    const intent = o.intent as number | undefined;
    return { state, features: { ...(features as Record<string, number>) }, intent, terminated: terminated === true, p: o.p };
  });
}

/**
 * A module's `transitions(state, a)` called through `guard`, each outcome through `checkStepResult`:
 * a non-empty array of plain outcomes, each with p in (0, 1]. `label` names the state in messages.
 */
export function checkedTransitions<S>(def: EnvDefinition<S>, state: S, a: number, source: string, label: string): Outcome<S>[] {
  const call = `transitions(${label}, ${def.actions[a]})`;
  const outs = guard(source, call, () => def.transitions!(state, a));
  if (!Array.isArray(outs) || outs.length === 0) throw new InputError("module.transitions", `${call} returned no outcomes`, source);
  return outs.map((o, i) => {
    const c = checkStepResult<S>(source, `${call} outcome ${i}`, o);
    if (typeof c.p !== "number" || !(c.p > 0 && c.p <= 1)) throw new InputError("module.transitions", `${call} outcome ${i} has probability ${String(c.p).slice(0, 40)}; each p must be in (0, 1]`, source);
    return { ...c, p: c.p };
  });
}

/** A module's `starts()` through `guard`: an array of { state, p } with p a finite number. */
export function checkedStarts<S>(def: EnvDefinition<S>, source: string): { state: S; p: number }[] {
  return guard(source, "starts()", () => {
    const list = def.starts!();
    if (!Array.isArray(list)) throw new InputError("module.result", `starts() returned ${list === null ? "null" : typeof list}; it must return an array of { state, p }`, source);
    return list.map((x, i) => {
      if (!x || typeof x !== "object") throw new InputError("module.result", `starts() item ${i} is not an object { state, p }`, source);
      const { state, p } = x as { state: S; p: unknown };
      if (typeof p !== "number" || !Number.isFinite(p)) throw new InputError("module.result", `starts() item ${i} has p = ${String(p).slice(0, 40)}; it must be a finite number`, source);
      return { state, p };
    });
  });
}

function outcomesOf<S>(def: EnvDefinition<S>, state: S, a: number, source: string, label: string): Outcome<S>[] {
  const what = `step(${label}, ${def.actions[a]})`;
  if (def.transitions) return checkedTransitions(def, state, a, source, label);
  // Deterministic module: two probes with different seeds must agree.
  const r1 = checkStepResult<S>(source, what, guard(source, what, () => def.step(state, a, createRng("probe-1"))));
  const r2 = checkStepResult<S>(source, what, guard(source, what, () => def.step(state, a, createRng("probe-2"))));
  const k = (r: typeof r1) => canonicalJson([r.state, r.features, r.intent ?? 0, r.terminated]);
  if (k(r1) !== k(r2)) {
    throw new InputError("module.stochastic", `${what} is random but the module has no transitions(); add transitions() or set finite: false`, source);
  }
  return [{ ...r1, p: 1 }];
}

/** Enumerate and compile; returns null when the module opts out (`finite: false`). */
export function compileModule<S>(def: EnvDefinition<S>, opts: CompileOptions): FiniteModel | null {
  return compileModuleStates(def, opts)?.model ?? null;
}

/** As `compileModule`, also returning the module state behind each model state id. */
export function compileModuleStates<S>(def: EnvDefinition<S>, opts: CompileOptions): { model: FiniteModel; states: S[] } | null {
  if (def.finite === false) return null;
  const source = opts.source;
  const key = (s: S) => guard(source, "key()", () => (def.key ? def.key(s) : canonicalJson(s)));
  const starts = def.starts
    ? guard(source, "starts()", () => def.starts!())
    : [{ state: guard(source, "reset()", () => def.reset(createRng("probe-1"))), p: 1 }];
  const ids = new Map<string, number>();
  const states: S[] = [];
  const terminalIds = new Set<number>();
  const continuing = new Set<number>();
  const intern = (s: S): number => {
    const k = key(s);
    let id = ids.get(k);
    if (id === undefined) {
      id = states.length;
      if (id >= opts.maxStates) {
        throw new InputError("module.tooManyStates", `more than ${opts.maxStates} reachable states; raise --max-states or set finite: false for Monte Carlo only`, source);
      }
      ids.set(k, id);
      states.push(s);
    }
    return id;
  };
  const startIds = starts.map((st) => ({ id: intern(st.state), p: st.p }));
  type Edge = { s: number; a: number; next: number; p: number; f: number[]; intent: number };
  const edges: Edge[] = [];
  const nA = def.actions.length;
  for (let i = 0; i < states.length; i++) {
    if (terminalIds.has(i)) continue;
    const label = key(states[i]);
    for (let a = 0; a < nA; a++) {
      for (const out of outcomesOf(def, states[i], a, source, label)) {
        checkNumbers(source, `step(${label}, ${def.actions[a]})`, out.features, out.intent, def.features);
        const next = intern(out.state);
        if (out.terminated) terminalIds.add(next);
        else continuing.add(next);
        if (terminalIds.has(next) && continuing.has(next)) {
          throw new InputError("module.terminalConflict", `state ${key(out.state)} is reached both with terminated=true and terminated=false; termination must depend on the state reached`, source);
        }
        edges.push({ s: i, a, next, p: out.p, f: def.features.map((f) => (Object.hasOwn(out.features, f) ? out.features[f] : 0)), intent: out.intent ?? 0 });
      }
    }
  }
  const b = new ModelBuilder({
    name: def.name,
    nStates: states.length,
    actions: def.actions,
    features: def.features,
    gamma: def.gamma ?? DEFAULT_MODULE_GAMMA,
    horizon: def.horizon ?? DEFAULT_MODULE_HORIZON,
    stateLabels: states.map((s) => key(s)),
    description: def.description,
    source,
  });
  for (const t of terminalIds) b.setTerminal(t);
  const startP = new Map<number, number>();
  for (const st of startIds) startP.set(st.id, (startP.get(st.id) ?? 0) + st.p);
  for (const [id, p] of startP) b.setStart(id, p);
  for (const e of edges) if (!terminalIds.has(e.s)) b.addOutcome(e.s, e.a, e.next, e.p, e.f, e.intent);
  if (def.observe) {
    const first = guard(source, "observe()", () => def.observe!(states[0]));
    const dim = first.length;
    const values = new Float64Array(states.length * dim);
    states.forEach((s, i) => {
      const o = guard(source, "observe()", () => def.observe!(s));
      for (let d = 0; d < dim; d++) values[i * dim + d] = o[d];
    });
    b.setObservations(first.map((_, d) => `obs${d}`), values);
  }
  if (def.rewards) b.setVariants(Object.fromEntries(Object.entries(def.rewards).map(([name, r]) => [name, { name, env: def.name, weights: r.weights }])));
  return { model: b.build(), states };
}
