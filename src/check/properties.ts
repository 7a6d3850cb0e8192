/**
 * The conformance properties of `gapwatch check`. Each is a fast-check property over generated inputs
 * (a seed and an action sequence, shrunk by fast-check to a minimal failing one). The precise
 * definitions are in README.md ("Bring your own environment") and restated above each property.
 */
import fc from "fast-check";
import { GapwatchError, InputError } from "../errors.js";
import { createRng, type Rng } from "../rng/rng.js";
import { type EnvDefinition, type Outcome } from "../sim/define.js";
import { canonicalJson } from "../util/canonical-json.js";
import { stateText } from "../sim/episode.js";
import { chiSquareTest } from "./chisq.js";
import { featureKey, outcomeKey, play, stateKey, Violation } from "./drive.js";
import type { CheckSubject } from "./subject.js";

/** Family-wise significance of the transition-frequency test (Bonferroni over the tested pairs). */
export const FREQUENCY_ALPHA = 0.001;
/** Draws per tested state-action pair (and for the start distribution). */
export const FREQUENCY_SAMPLES = 2000;
/** Probabilities must sum to 1 within this. */
export const PROBABILITY_TOLERANCE = 1e-9;
/** stochastic-variety: chance of a false alarm per tested pair is at most this. */
export const VARIETY_FALSE_ALARM = 1e-9;

export interface PropertyContext {
  runs: number;
  seed: number;
  /** fast-check replay path (with `--replay`). */
  path?: string;
}

export interface PropertyResult {
  name: string;
  status: "passed" | "failed" | "skipped";
  runs: number;
  /** Why skipped, or a note on what was tested. */
  note?: string;
  counterexample?: { input: unknown; message: string };
  /** fast-check's path to the shrunk counterexample (replay with --seed and --replay). */
  path?: string;
}

type S = unknown;
interface TrajInput {
  seed: number;
  actions: number[];
}

export interface PropertySpec {
  name: string;
  summary: string;
  run(subject: CheckSubject<S>, ctx: PropertyContext): PropertyResult;
}

const horizonOf = (sub: CheckSubject<S>) => Math.min(sub.def.horizon ?? sub.model?.horizon ?? 200, 1000);

function actionsArb(sub: CheckSubject<S>, maxLength = horizonOf(sub)) {
  return fc.array(fc.nat({ max: sub.def.actions.length - 1 }), { maxLength, size: "max" });
}
function trajArb(sub: CheckSubject<S>) {
  return fc.record({ seed: fc.nat({ max: 2 ** 31 - 1 }), actions: actionsArb(sub) });
}

/** Describe an input for people: actions by name. */
function showInput(sub: CheckSubject<S>, v: unknown): unknown {
  const fix = (x: unknown): unknown => {
    if (x && typeof x === "object" && !Array.isArray(x)) {
      const o = x as Record<string, unknown>;
      const out: Record<string, unknown> = {};
      for (const [k, val] of Object.entries(o)) {
        const names = (xs: number[]) => xs.map((a) => sub.def.actions[a] ?? String(a));
        out[k] =
          k === "actions" && Array.isArray(val)
            ? names(val as number[])
            : k === "episodes" && Array.isArray(val)
              ? (val as number[][]).map(names)
              : typeof val === "number" && !Number.isFinite(val)
                ? String(val)
                : val;
      }
      return out;
    }
    return x;
  };
  return fix(v);
}

/** Errors from user code that no property expects end the whole check (exit 2). */
function isFatal(e: unknown): e is GapwatchError {
  return e instanceof GapwatchError && (e.code === "module.threw" || e.code === "module.reset" || e.code === "module.result");
}

/**
 * Run one fast-check property. `pred` throws a Violation for a counterexample; a fatal module error is
 * shrunk like a violation and then rethrown. `skip()` may turn a vacuous pass into "skipped".
 */
function runFc<T>(
  name: string,
  sub: CheckSubject<S>,
  ctx: PropertyContext,
  arb: fc.Arbitrary<T>,
  pred: (v: T) => void,
  extra: { skip?: () => string | undefined; note?: () => string | undefined; runs?: number } = {},
): PropertyResult {
  const numRuns = extra.runs ?? ctx.runs;
  const details = fc.check(
    fc.property(arb, (v) => {
      pred(v);
    }),
    { seed: ctx.seed, numRuns, path: ctx.path, endOnFailure: ctx.path !== undefined },
  );
  if (details.failed) {
    const err = details.errorInstance;
    if (isFatal(err)) throw err;
    const message = err instanceof Error ? err.message : String(err);
    return {
      name,
      status: "failed",
      runs: details.numRuns,
      counterexample: { input: showInput(sub, details.counterexample?.[0]), message },
      path: details.counterexamplePath ?? undefined,
    };
  }
  const skip = extra.skip?.();
  if (skip) return { name, status: "skipped", runs: details.numRuns, note: skip };
  return { name, status: "passed", runs: details.numRuns, note: extra.note?.() };
}

/** A one-shot failure found without generated input (a whole-model check). */
function failedStatic(name: string, input: unknown, message: string): PropertyResult {
  return { name, status: "failed", runs: 1, counterexample: { input, message } };
}

const text = (sub: CheckSubject<S>, s: unknown) => stateText(sub.def as EnvDefinition<unknown>, s);

// ---------------------------------------------------------------------------------------------------
// determinism: for every seed and action sequence, two episodes from fresh generators with that seed
// give identical trajectories: same start key, and per step the same state key, features, intent,
// termination and observation.
function record(sub: CheckSubject<S>, seed: number, actions: number[]): string[] {
  const t = play(sub, seed, actions);
  const obs = (s: S) => (sub.def.observe ? canonicalJson(sub.def.observe(s)) : "");
  const out = [`start ${stateKey(sub.def, t.start)} ${obs(t.start)}`];
  for (const st of t.steps) out.push(`state ${stateKey(sub.def, st.state)} features ${featureKey(st.features)} intent ${st.intent} terminated ${st.terminated} ${obs(st.state)}`);
  return out;
}
const determinism: PropertySpec = {
  name: "determinism",
  summary: "same seed and action sequence give an identical trajectory",
  run: (sub, ctx) =>
    runFc("determinism", sub, ctx, trajArb(sub), ({ seed, actions }) => {
      const a = record(sub, seed, actions);
      const b = record(sub, seed, actions);
      for (let i = 0; i < Math.max(a.length, b.length); i++) {
        if (a[i] !== b[i]) throw new Violation(`two runs with seed ${seed} differ at step ${i}: first ${a[i] ?? "(ended)"}; second ${b[i] ?? "(ended)"}`);
      }
    }),
};

// ---------------------------------------------------------------------------------------------------
// stochastic-variety: where the environment declares randomness (transitions() with two or more
// distinct outcomes for a reached pair, or starts() with two or more states), sampling that step
// (or reset) with N different seeds gives at least two distinct results. N is chosen so that a
// correct environment fails with probability <= 1e-9: N = ceil(ln 1e-9 / ln pmax) + 1, at most 20000.
function groups(sub: CheckSubject<S>, outs: Outcome<S>[]): Map<string, number> {
  const g = new Map<string, number>();
  for (const o of outs) {
    const k = outcomeKey(sub.def, o);
    g.set(k, (g.get(k) ?? 0) + o.p);
  }
  return g;
}
function drawsFor(pmax: number): number {
  if (pmax >= 1) return 0;
  return Math.min(20000, Math.ceil(Math.log(VARIETY_FALSE_ALARM) / Math.log(pmax)) + 1);
}
function modelIsDeterministic(sub: CheckSubject<S>): boolean {
  const m = sub.model!;
  let starts = 0;
  for (let s = 0; s < m.nStates; s++) if (m.start[s] > 0) starts++;
  if (starts > 1) return false;
  for (let k = 0; k < m.nStates * m.nActions; k++) if (m.saStart[k + 1] - m.saStart[k] > 1) return false;
  return true;
}
const stochasticVariety: PropertySpec = {
  name: "stochastic-variety",
  summary: "different seeds do not all give the same result where the environment is stochastic",
  run(sub, ctx) {
    const name = "stochastic-variety";
    if (sub.model && modelIsDeterministic(sub)) return { name, status: "skipped", runs: 0, note: "deterministic: every reachable step has one outcome and there is one start state" };
    if (!sub.def.transitions && !sub.def.starts) return { name, status: "skipped", runs: 0, note: "no transitions() or starts(): the module does not declare whether it is random" };
    let tested = 0;
    const def = sub.def;
    let startsDone = false;
    return runFc(
      name,
      sub,
      ctx,
      trajArb(sub),
      ({ seed, actions }) => {
        if (def.starts && !startsDone) {
          startsDone = true;
          const g = new Map<string, number>();
          for (const st of def.starts()) g.set(stateKey(def, st.state), (g.get(stateKey(def, st.state)) ?? 0) + st.p);
          if (g.size > 1) {
            tested++;
            const n = drawsFor(Math.max(...g.values()));
            const seen = new Set<string>();
            for (let i = 0; i < n && seen.size < 2; i++) seen.add(stateKey(def, def.reset(createRng(`variety/${seed}/reset/${i}`))));
            if (seen.size < 2) throw new Violation(`starts() lists ${g.size} start states but reset() gave ${[...seen][0]} for all ${n} seeds`);
          }
        }
        if (!def.transitions) return;
        const t = play(sub, seed, actions);
        for (const st of t.steps) {
          const g = groups(sub, def.transitions(st.from, st.action));
          if (g.size < 2) continue;
          tested++;
          const n = drawsFor(Math.max(...g.values()));
          const seen = new Set<string>();
          for (let i = 0; i < n && seen.size < 2; i++) seen.add(outcomeKey(def, def.step(st.from, st.action, createRng(`variety/${seed}/${i}`))));
          if (seen.size < 2) {
            throw new Violation(`transitions(${text(sub, st.from)}, ${def.actions[st.action]}) lists ${g.size} distinct outcomes but step() gave the same result for all ${n} seeds: ${[...seen][0]}`);
          }
          return;
        }
      },
      { skip: () => (tested === 0 ? `no stochastic step reached in ${ctx.runs} runs` : undefined), note: () => `${tested} stochastic pairs tested` },
    );
  },
};

// ---------------------------------------------------------------------------------------------------
// reset-valid: for every seed, reset() returns a state (not undefined/null) whose key() is a string;
// observe() of it (if declared) is an array of finite numbers of the same length as for every other
// state seen; with starts() its key is one of the listed start states with p > 0; with a finite model
// it is a start state of the model and not terminal.
const resetValid: PropertySpec = {
  name: "reset-valid",
  summary: "reset returns a valid start state",
  run(sub, ctx) {
    const def = sub.def;
    let dim: number | undefined;
    const modelStarts = new Map<string, { p: number; terminal: boolean }>();
    if (sub.model) sub.model.stateLabels.forEach((l, i) => modelStarts.set(l, { p: sub.model!.start[i], terminal: sub.model!.terminal[i] === 1 }));
    const declared = def.starts ? new Set(def.starts().filter((x) => x.p > 0).map((x) => stateKey(def, x.state))) : null;
    return runFc("reset-valid", sub, ctx, fc.record({ seed: fc.nat({ max: 2 ** 31 - 1 }) }), ({ seed }) => {
      const s = def.reset(createRng(`check/${seed}`));
      if (s === undefined || s === null) throw new Violation(`reset() returned ${String(s)}`);
      const k = stateKey(def, s);
      if (typeof k !== "string") throw new Violation(`key(reset state) returned ${typeof k}, expected a string`);
      if (declared && !declared.has(k)) throw new Violation(`reset() returned ${k}, which is not one of the start states listed by starts(): ${[...declared].slice(0, 5).join(", ")}`);
      if (sub.model) {
        const m = modelStarts.get(k);
        if (!m) throw new Violation(`reset() returned ${k}, which is not a state of the finite model`);
        if (!(m.p > 0)) throw new Violation(`reset() returned ${k}, which has start probability 0 in the finite model`);
        if (m.terminal) throw new Violation(`reset() returned ${k}, a terminal state`);
      }
      if (def.observe) {
        const o = def.observe(s);
        if (!Array.isArray(o) || !o.every((x) => typeof x === "number" && Number.isFinite(x))) throw new Violation(`observe(${k}) = ${canonicalJson(o)}; expected an array of finite numbers`);
        if (dim === undefined) dim = o.length;
        else if (o.length !== dim) throw new Violation(`observe(${k}) has ${o.length} entries, another start state had ${dim}`);
      }
    });
  },
};

// ---------------------------------------------------------------------------------------------------
// step-after-termination: play until the episode ends (padding actions cyclically). (a) The episode
// wrapper then refuses another step with "module.episodeOver". (b) If the environment terminated, it
// agrees with itself: stepping the raw environment from the state it terminated in either throws
// (refuses) or reports terminated=true again, for every action.
const stepAfterTermination: PropertySpec = {
  name: "step-after-termination",
  summary: "stepping after the episode ended is refused; a terminal state stays terminal",
  run: (sub, ctx) =>
    runFc("step-after-termination", sub, ctx, trajArb(sub), ({ seed, actions }) => {
      const t = play(sub, seed, actions, { pad: true });
      let refused = false;
      try {
        t.episode.step(0, t.rng);
      } catch (e) {
        if (e instanceof InputError && e.code === "module.episodeOver") refused = true;
        else throw e;
      }
      if (!refused) throw new Violation(`the episode wrapper accepted a step after the episode ended at step ${t.episode.t}`);
      const last = t.steps[t.steps.length - 1];
      if (!last || !last.terminated) return;
      for (let a = 0; a < sub.def.actions.length; a++) {
        let r;
        try {
          r = sub.def.step(last.state, a, createRng(`after/${seed}`));
        } catch {
          continue; // refused: fine
        }
        if (r.terminated !== true) {
          throw new Violation(
            `the episode terminated at step ${last.t} in ${text(sub, last.state)}, but step(${text(sub, last.state)}, ${sub.def.actions[a]}) returned terminated=false (next ${text(sub, r.state)}): a terminal state must refuse (throw) or stay terminal`,
          );
        }
      }
    }),
};

// ---------------------------------------------------------------------------------------------------
// invalid-action-refused: after any prefix of play, for an invalid action x (an integer outside
// 0..n-1, a fraction, NaN): (a) the episode wrapper throws "module.action" and the episode is unchanged
// (the environment was not called, so no random draws were consumed, and the step count and state are
// as before); (b) the raw environment refuses x too: step(state, x) throws.
const invalidActionRefused: PropertySpec = {
  name: "invalid-action-refused",
  summary: "actions outside the declared list are refused",
  run(sub, ctx) {
    const nA = sub.def.actions.length;
    const bad = fc.oneof(fc.integer({ min: nA, max: nA + 3 }), fc.integer({ min: -3, max: -1 }), fc.constant(0.5), fc.constant(Number.NaN));
    const arb = fc.record({ seed: fc.nat({ max: 2 ** 31 - 1 }), actions: actionsArb(sub), invalid: bad });
    return runFc("invalid-action-refused", sub, ctx, arb, ({ seed, actions, invalid }) => {
      // The wrapper's refusal happens before the environment is called: count calls through a spy.
      let calls = 0;
      const spy = { ...sub.def, step: (s: S, x: number, r: Rng) => (calls++, sub.def.step(s, x, r)), reset: (r: Rng) => (calls++, sub.def.reset(r)) };
      const a = play({ ...sub, def: spy }, seed, actions);
      const state = a.episode.state;
      if (!a.episode.done) {
        let code: string | undefined;
        const before = calls;
        const t = a.episode.t;
        try {
          a.episode.step(invalid, a.rng);
        } catch (e) {
          code = e instanceof GapwatchError ? e.code : "thrown";
        }
        if (code !== "module.action") throw new Violation(`the episode wrapper did not refuse action ${invalid} (got ${code ?? "a result"})`);
        if (calls !== before || a.episode.t !== t || a.episode.state !== state) throw new Violation(`the refused action ${invalid} reached the environment or changed the episode`);
      }
      let accepted: unknown;
      try {
        accepted = sub.def.step(state, invalid, createRng(`invalid/${seed}`));
      } catch {
        return;
      }
      throw new Violation(`step(${text(sub, state)}, ${invalid}) returned ${text(sub, (accepted as { state?: unknown })?.state)} instead of refusing: valid actions are 0..${nA - 1}`);
    });
  },
};

// ---------------------------------------------------------------------------------------------------
// features-declared-and-finite: every step's `features` is an object whose keys are all declared
// feature names and whose values are finite numbers.
const featuresDeclared: PropertySpec = {
  name: "features-declared-and-finite",
  summary: "features are the declared ones and finite",
  run: (sub, ctx) =>
    runFc("features-declared-and-finite", sub, ctx, trajArb(sub), ({ seed, actions }) => {
      const t = play(sub, seed, actions);
      for (const st of t.steps) {
        const where = `step ${st.t} (${text(sub, st.from)}, ${sub.def.actions[st.action]})`;
        if (!st.features || typeof st.features !== "object") throw new Violation(`${where} returned features = ${String(st.features)}`);
        for (const [f, v] of Object.entries(st.features)) {
          if (!sub.def.features.includes(f)) throw new Violation(`${where} returned undeclared feature "${f}" (declared: ${sub.def.features.join(", ")})`);
          if (typeof v !== "number" || !Number.isFinite(v)) throw new Violation(`${where} returned feature "${f}" = ${String(v)}`);
        }
      }
    }),
};

// intent-finite: every step's intent is absent (0) or a finite number.
const intentFinite: PropertySpec = {
  name: "intent-finite",
  summary: "intent increments are finite numbers",
  run: (sub, ctx) =>
    runFc("intent-finite", sub, ctx, trajArb(sub), ({ seed, actions }) => {
      const t = play(sub, seed, actions);
      for (const st of t.steps) {
        if (typeof st.intent !== "number" || !Number.isFinite(st.intent)) {
          throw new Violation(`step ${st.t} (${text(sub, st.from)}, ${sub.def.actions[st.action]}) returned intent = ${String(st.intent)}`);
        }
      }
    }),
};

// ---------------------------------------------------------------------------------------------------
// probabilities-valid: with a finite model, every state-action pair's outcome probabilities are in
// (0, 1] and sum to 1 within 1e-9, and so does the start distribution (checked over the whole model).
// With transitions()/starts(): at every state reached, for every action, transitions() returns a
// non-empty list whose p are finite, in (0, 1], summing to 1 within 1e-9; the same for starts().
function checkList(where: string, ps: number[]): string | undefined {
  if (ps.length === 0) return `${where} returned no outcomes`;
  for (const p of ps) if (typeof p !== "number" || !Number.isFinite(p) || p <= 0 || p > 1) return `${where} has an outcome with p = ${String(p)}; probabilities must be in (0, 1]`;
  const sum = ps.reduce((a, b) => a + b, 0);
  if (Math.abs(sum - 1) > PROBABILITY_TOLERANCE) return `${where} probabilities sum to ${sum}, expected 1 (within ${PROBABILITY_TOLERANCE})`;
  return undefined;
}
const probabilitiesValid: PropertySpec = {
  name: "probabilities-valid",
  summary: "outcome and start probabilities are in (0, 1] and sum to 1",
  run(sub, ctx) {
    const name = "probabilities-valid";
    const m = sub.model;
    if (m) {
      for (let s = 0; s < m.nStates; s++) {
        for (let a = 0; a < m.nActions; a++) {
          const k = s * m.nActions + a;
          const msg = checkList(`(${m.stateLabels[s]}, ${m.actions[a]})`, Array.from(m.prob.subarray(m.saStart[k], m.saStart[k + 1])));
          if (msg) return failedStatic(name, { state: m.stateLabels[s], action: m.actions[a] }, msg);
        }
      }
      const msg = checkList("start distribution", Array.from(m.start).filter((p) => p !== 0));
      if (msg) return failedStatic(name, { start: true }, msg);
    }
    const def = sub.def;
    if (!def.transitions && !def.starts) {
      return m ? { name, status: "passed", runs: 1, note: "whole model checked" } : { name, status: "skipped", runs: 0, note: "no transitions(), starts() or finite model" };
    }
    if (def.starts) {
      const msg = checkList("starts()", def.starts().map((x) => x.p));
      if (msg) return failedStatic(name, { starts: true }, msg);
    }
    if (!def.transitions) return { name, status: "passed", runs: 1 };
    return runFc(name, sub, ctx, trajArb(sub), ({ seed, actions }) => {
      const t = play(sub, seed, actions);
      const states = [t.start, ...t.steps.filter((s) => !s.terminated).map((s) => s.state)];
      for (const s of states) {
        for (let a = 0; a < def.actions.length; a++) {
          const outs = def.transitions!(s, a);
          const where = `transitions(${text(sub, s)}, ${def.actions[a]})`;
          if (!Array.isArray(outs)) throw new Violation(`${where} returned ${typeof outs}, expected a list of outcomes`);
          const msg = checkList(where, outs.map((o) => o.p));
          if (msg) throw new Violation(msg);
        }
      }
    });
  },
};

// ---------------------------------------------------------------------------------------------------
// episodes-end-within-limit: (a) under the episode wrapper every episode ends by step H (the horizon),
// truncated exactly at H when not terminated, never both; (b) with a finite model that has terminal
// states, termination is reachable within H: from every start state some terminal state is at most H
// steps away (exact breadth-first search over outcomes with p > 0). A model with no terminal state is
// a continuing task, ended only by the step limit; without a finite model (b) is not checked.
function shortestToTerminal(m: NonNullable<CheckSubject["model"]>): Int32Array {
  // Reverse BFS from terminal states.
  const nS = m.nStates;
  const preds: number[][] = Array.from({ length: nS }, () => []);
  for (let s = 0; s < nS; s++) {
    if (m.terminal[s]) continue;
    for (let k = s * m.nActions; k < (s + 1) * m.nActions; k++) for (let o = m.saStart[k]; o < m.saStart[k + 1]; o++) if (m.prob[o] > 0) preds[m.next[o]].push(s);
  }
  const dist = new Int32Array(nS).fill(-1);
  const queue: number[] = [];
  for (let s = 0; s < nS; s++) if (m.terminal[s]) {
    dist[s] = 0;
    queue.push(s);
  }
  for (let q = 0; q < queue.length; q++) {
    const s = queue[q];
    for (const p of preds[s]) if (dist[p] < 0) {
      dist[p] = dist[s] + 1;
      queue.push(p);
    }
  }
  return dist;
}
const episodesEnd: PropertySpec = {
  name: "episodes-end-within-limit",
  summary: "every episode ends by the step limit, and termination is reachable within it",
  run(sub, ctx) {
    const name = "episodes-end-within-limit";
    const H = sub.def.horizon ?? sub.model?.horizon ?? 200;
    const m = sub.model;
    const continuing = m !== undefined && !m.terminal.some((x) => x === 1);
    if (m && !continuing) {
      const dist = shortestToTerminal(m);
      for (let s = 0; s < m.nStates; s++) {
        if (!(m.start[s] > 0)) continue;
        if (dist[s] < 0 || dist[s] > H) {
          return failedStatic(name, { start: m.stateLabels[s], horizon: H }, dist[s] < 0 ? `no terminal state is reachable from start ${m.stateLabels[s]}` : `the nearest terminal state is ${dist[s]} steps from start ${m.stateLabels[s]}, beyond the step limit ${H}`);
        }
      }
    }
    let terminatedRuns = 0;
    const result = runFc(name, sub, ctx, trajArb(sub), ({ seed, actions }) => {
      const t = play(sub, seed, actions, { pad: true });
      const last = t.steps[t.steps.length - 1];
      if (!t.episode.done) throw new Violation(`the episode did not end after ${t.episode.t} steps (limit ${H})`);
      if (t.steps.length > H) throw new Violation(`the episode ran ${t.steps.length} steps, past the limit ${H}`);
      if (last && last.truncated && (last.terminated || last.t !== H)) throw new Violation(`truncated at step ${last.t} (limit ${H}, terminated=${last.terminated})`);
      if (last?.terminated) terminatedRuns++;
    });
    if (result.status === "failed") return result;
    if (continuing) return { ...result, note: "continuing task (no terminal state): every episode ends at the step limit" };
    if (!m) return { ...result, note: `no finite model: reachability not checked; ${terminatedRuns} of ${result.runs} generated episodes terminated` };
    return { ...result, note: `${terminatedRuns} of ${result.runs} generated episodes terminated` };
  },
};

// ---------------------------------------------------------------------------------------------------
// transition-frequencies: where exact outcome probabilities exist (transitions()), sampled step()
// results agree with them. Each run plays a generated episode and tests one reached state-action pair
// with two or more distinct outcomes (the `pick`-th such pair): FREQUENCY_SAMPLES draws of step() from
// that state, each matched to the listed outcome with the same state key, features, intent and
// termination (a draw matching none fails at once), then Pearson's chi-square against the listed
// probabilities, cells with expected count < 5 pooled (Cochran's rule, common practice). The
// family-wise significance is alpha = 0.001 with a Bonferroni correction over the tests made: each
// test rejects at alpha / (runs + 1) (at most one pair per run, plus the start distribution via
// starts() and reset(), tested once the same way).
function frequencyTest(
  sub: CheckSubject<S>,
  label: string,
  listed: Map<string, number>,
  draw: (i: number) => string,
  alpha: number,
): void {
  const labels = [...listed.keys()];
  const index = new Map(labels.map((l, i) => [l, i]));
  const counts = new Array<number>(labels.length).fill(0);
  for (let i = 0; i < FREQUENCY_SAMPLES; i++) {
    const k = draw(i);
    const j = index.get(k);
    if (j === undefined) throw new Violation(`${label}: step gave ${k}, which is not among the ${labels.length} listed outcomes`);
    counts[j]++;
  }
  const total = [...listed.values()].reduce((a, b) => a + b, 0);
  const res = chiSquareTest(labels, counts, [...listed.values()].map((p) => p / total), alpha);
  if (res?.reject) {
    const cells = res.cells.map((c) => `${c.label.length > 60 ? c.label.slice(0, 57) + "..." : c.label}: observed ${c.observed}, expected ${c.expected.toFixed(1)}`).join("; ");
    throw new Violation(
      `${label}: sampled frequencies disagree with the listed probabilities (chi-square ${res.statistic.toFixed(2)} > ${res.critical.toFixed(2)}, df ${res.df}, p = ${res.pValue.toExponential(2)}, per-test alpha ${alpha.toExponential(2)}; ${FREQUENCY_SAMPLES} draws): ${cells}`,
    );
  }
}
const transitionFrequencies: PropertySpec = {
  name: "transition-frequencies",
  summary: "sampled outcomes match the exact probabilities (chi-square, family-wise alpha 0.001)",
  run(sub, ctx) {
    const name = "transition-frequencies";
    const def = sub.def;
    if (sub.model && modelIsDeterministic(sub)) return { name, status: "skipped", runs: 0, note: "deterministic: nothing to sample" };
    if (!def.transitions && !def.starts) return { name, status: "skipped", runs: 0, note: "no transitions() or starts(): no exact probabilities to compare with" };
    const alpha = FREQUENCY_ALPHA / (ctx.runs + 1);
    let tested = 0;
    if (def.starts) {
      const listed = new Map<string, number>();
      for (const st of def.starts()) listed.set(stateKey(def, st.state), (listed.get(stateKey(def, st.state)) ?? 0) + st.p);
      if (listed.size > 1) {
        tested++;
        const rng = createRng(`frequencies/${ctx.seed}/reset`);
        try {
          frequencyTest(sub, "reset()", listed, () => stateKey(def, def.reset(rng)), alpha);
        } catch (e) {
          if (e instanceof Violation) return failedStatic(name, { seed: ctx.seed, reset: true }, e.message);
          throw e;
        }
      }
    }
    const arb = fc.record({ seed: fc.nat({ max: 2 ** 31 - 1 }), actions: actionsArb(sub), pick: fc.nat({ max: 1000 }) });
    return runFc(
      name,
      sub,
      ctx,
      arb,
      ({ seed, actions, pick }) => {
        if (!def.transitions) return;
        const t = play(sub, seed, actions);
        const pairs = t.steps.map((st) => ({ st, g: groups(sub, def.transitions!(st.from, st.action)) })).filter((x) => x.g.size > 1);
        if (pairs.length === 0) return;
        const { st, g } = pairs[pick % pairs.length];
        tested++;
        const rng = createRng(`frequencies/${seed}/${pick}`);
        frequencyTest(sub, `step(${text(sub, st.from)}, ${def.actions[st.action]})`, g, () => outcomeKey(def, def.step(st.from, st.action, rng)), alpha);
      },
      {
        skip: () => (tested === 0 ? `no stochastic step reached in ${ctx.runs} runs` : undefined),
        note: () => `${tested} tests at per-test alpha ${alpha.toExponential(2)} (family-wise ${FREQUENCY_ALPHA}, Bonferroni)`,
      },
    );
  },
};

// ---------------------------------------------------------------------------------------------------
// observation-hides-intent. What a learner sees of a state: the numbers in its key (the numeric tokens
// of key(state), by position, when every state seen has the same number of them) and the components of
// observe(state). A channel c "reveals the intent" on a set of generated episodes when, over all their
// steps t, c(s_t) = alpha * X_t + beta exactly (alpha != 0, within 1e-9 relative) for X = the intent
// accumulated so far or X = the intent increment of the step into s_t, with X taking at least three
// distinct values (two points always fit a line), while the same channel is NOT such an affine function
// of any designer-side quantity: a feature's running sum or its last value, or a declared reward
// variant's running designer return or its last reward. Such a channel hands the learner the held-out
// score itself; a channel that tracks the designer reward as well carries nothing the learner does not
// already get. Each run generates four episodes from one seed; any revealing channel is a failure.
const LEAK_EPISODES = 4;
function numericTokens(k: string): number[] {
  return (k.match(/-?\d+(?:\.\d+)?(?:e[-+]?\d+)?/gi) ?? []).map(Number);
}
function affine(x: number[], y: number[], minDistinct: number): { a: number; b: number } | null {
  if (new Set(x).size < minDistinct) return null;
  let i0 = 0;
  let i1 = 0;
  for (let i = 1; i < x.length; i++) {
    if (x[i] < x[i0]) i0 = i;
    if (x[i] > x[i1]) i1 = i;
  }
  const a = (y[i1] - y[i0]) / (x[i1] - x[i0]);
  if (!Number.isFinite(a) || a === 0) return null;
  const b = y[i0] - a * x[i0];
  for (let i = 0; i < x.length; i++) if (Math.abs(y[i] - (a * x[i] + b)) > 1e-9 * (1 + Math.abs(y[i]))) return null;
  return { a, b };
}
const observationHidesIntent: PropertySpec = {
  name: "observation-hides-intent",
  summary: "no observed number is the intent score where the designer reward is not",
  run(sub, ctx) {
    const def = sub.def;
    const feats = def.features;
    const variants = Object.entries(def.rewards ?? {});
    const arb = fc.record({ seed: fc.nat({ max: 2 ** 31 - 1 }), episodes: fc.array(actionsArb(sub), { minLength: LEAK_EPISODES, maxLength: LEAK_EPISODES }) });
    return runFc("observation-hides-intent", sub, ctx, arb, ({ seed, episodes }) => {
      const channels = new Map<string, number[]>();
      const series = { intentSum: [] as number[], intentLast: [] as number[] };
      const designer = new Map<string, number[]>();
      const push = (m: Map<string, number[]>, k: string, v: number) => {
        let arr = m.get(k);
        if (!arr) m.set(k, (arr = []));
        arr.push(v);
      };
      let tokenCount: number | undefined;
      let tokensUsable = true;
      const keyTokens: number[][] = [];
      episodes.forEach((actions, e) => {
        const t = play(sub, seed + e, actions);
        let isum = 0;
        const fsum = new Array<number>(feats.length).fill(0);
        const vsum = new Array<number>(variants.length).fill(0);
        for (const st of t.steps) {
          isum += st.intent;
          series.intentSum.push(isum);
          series.intentLast.push(st.intent);
          feats.forEach((f, j) => {
            const v = st.features[f] ?? 0;
            fsum[j] += v;
            push(designer, `running sum of feature ${f}`, fsum[j]);
            push(designer, `feature ${f}`, v);
          });
          variants.forEach(([n, r], j) => {
            let v = 0;
            for (const [f, w] of Object.entries(r.weights)) v += w * (st.features[f] ?? 0);
            vsum[j] += v;
            push(designer, `designer return of ${n}`, vsum[j]);
            push(designer, `designer reward of ${n}`, v);
          });
          const toks = numericTokens(stateKey(def, st.state));
          if (tokenCount === undefined) tokenCount = toks.length;
          else if (toks.length !== tokenCount) tokensUsable = false;
          keyTokens.push(toks);
          if (def.observe) def.observe(st.state).forEach((v, d) => push(channels, `observe()[${d}]`, v));
        }
      });
      if (tokensUsable && tokenCount) for (let d = 0; d < tokenCount; d++) channels.set(`key number #${d + 1}`, keyTokens.map((t) => t[d]));
      const explains = [...designer.values()];
      for (const [cname, c] of channels) {
        for (const [xname, x] of [["intent accumulated so far", series.intentSum], ["the last intent increment", series.intentLast]] as const) {
          const fit = affine(x, c, 3);
          if (!fit) continue;
          if (explains.some((d) => affine(d, c, 2))) continue;
          throw new Violation(
            `the learner can read the intent: ${cname} = ${+fit.a.toPrecision(6)} * (${xname}) + ${+fit.b.toPrecision(6)} on all ${c.length} steps of these episodes, and no designer feature or reward explains it`,
          );
        }
      }
    });
  },
};

// ---------------------------------------------------------------------------------------------------
// user:<name>: a module's own invariant, called as prop({ def, rng, state, action }) at a state reached
// by a generated action prefix; it holds when it returns true, and fails when it returns false or a
// message, or throws.
function userProperty(pname: string): PropertySpec {
  return {
    name: `user:${pname}`,
    summary: "declared by the module",
    run(sub, ctx) {
      const nA = sub.def.actions.length;
      const arb = fc.record({ seed: fc.nat({ max: 2 ** 31 - 1 }), actions: actionsArb(sub), action: fc.nat({ max: nA - 1 }) });
      return runFc(`user:${pname}`, sub, ctx, arb, ({ seed, actions, action }) => {
        const t = play(sub, seed, actions);
        const state = t.episode.state;
        let r: boolean | string;
        try {
          r = sub.def.properties![pname]({ def: sub.def, rng: createRng(`property/${seed}`), state, action });
        } catch (e) {
          throw new Violation(`${pname} threw at ${text(sub, state)}, ${sub.def.actions[action]}: ${(e as Error)?.message ?? String(e)}`);
        }
        if (r !== true) throw new Violation(`${pname} failed at ${text(sub, state)}, ${sub.def.actions[action]}${typeof r === "string" ? `: ${r}` : ""}`);
      });
    },
  };
}

/** The built-in properties, in report order. */
export const PROPERTIES: PropertySpec[] = [
  determinism,
  stochasticVariety,
  resetValid,
  stepAfterTermination,
  invalidActionRefused,
  featuresDeclared,
  intentFinite,
  probabilitiesValid,
  episodesEnd,
  transitionFrequencies,
  observationHidesIntent,
];

/** Built-in properties plus the module's own (`user:<name>`). */
export function propertiesFor(sub: CheckSubject<S>): PropertySpec[] {
  return [...PROPERTIES, ...Object.keys(sub.def.properties ?? {}).map(userProperty)];
}

