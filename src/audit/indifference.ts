/**
 * Risk indifference point. A "risky" behaviour fails catastrophically with probability p (designer
 * return `fail`) or succeeds (return `ok`); a "safe" behaviour returns `safe` for sure. An optimizer of
 * the designer reward compares (1 - p) * ok + p * fail with safe, so it is indifferent at
 *
 *     p* = (ok - safe) / (ok - fail)
 *
 * (plain expected-value arithmetic of a two-outcome lottery). When ok > fail, the risky behaviour is
 * strictly preferred exactly for p < p*: p* is the failure rate the designer reward tolerates. Cases:
 *  - ok > fail, 0 < p* < 1: "threshold" (risky iff p < p*).
 *  - ok > fail, safe >= ok (p* <= 0): "never" — even a certain success is not worth it.
 *  - ok > fail, safe < fail (p* > 1): "always" — even a certain failure beats the safe behaviour.
 *    (safe == fail gives p* = 1: risky for every p < 1, "threshold".)
 *  - ok == fail: the lottery does not depend on p; p* is undefined (NaN); "always" if ok > safe, "never"
 *    if ok < safe, "indifferent" if ok == safe.
 *  - ok < fail: the reward pays more for failing; risky is preferred iff p > p*: "inverted" when
 *    0 < p* < 1, else "always" (safe <= ok) or "never" (safe >= fail).
 * "always" means strictly preferred for every p in the open interval (0, 1) (a tie is possible at the
 * end where p* sits). `pStar` is the raw crossing; `clipped` is it clipped to [0, 1] (NaN stays NaN).
 *
 * The model-level helper evaluates two given policies exactly (catastrophic states must be terminal): the risky policy's failure probability
 * (probability of ever entering a catastrophic state, by policy evaluation with an indicator reward and
 * no discount) and its designer return split by that event, E[G | fail] and E[G | no fail]. Those
 * conditional returns are computed exactly: with h(s) the failure probability from s, u(s) = E[G 1{fail}]
 * satisfies u(s) = sum_a pi(a|s) sum_o p_o (r_o h(s'_o) + gamma u(s'_o)), a policy evaluation with
 * reward r_o h(s'_o). The lottery view then asks: keeping those two conditional returns, how high could
 * the failure rate go before the optimizer of this reward would switch to the safe policy?
 *
 * Pure; no I/O.
 */
import { InputError } from "../errors.js";
import type { FiniteModel } from "../model/types.js";
import { policyValues, policyValuesMany } from "../solve/default-solver.js";
import { startValue } from "../solve/policy.js";
import type { Policy } from "../solve/sweeps.js";

export interface Lottery {
  /** Designer return when the risky behaviour succeeds. */
  ok: number;
  /** Designer return when it fails catastrophically. */
  fail: number;
  /** Designer return of the safe behaviour. */
  safe: number;
}

export type IndifferenceKind = "threshold" | "never" | "always" | "inverted" | "indifferent";

export interface Indifference {
  /** (ok - safe) / (ok - fail); NaN when ok == fail. */
  pStar: number;
  /** pStar clipped to [0, 1] (NaN stays NaN). */
  clipped: number;
  kind: IndifferenceKind;
}

/** The failure probability at which the risky and safe behaviours have the same designer return. */
export function indifferenceProbability({ ok, fail, safe }: Lottery): Indifference {
  for (const [k, v] of [["ok", ok], ["fail", fail], ["safe", safe]] as const) {
    if (!Number.isFinite(v)) throw new InputError("input.lottery", `${k} must be a finite number, got ${v}`, `lottery.${k}`);
  }
  if (ok === fail) {
    const kind: IndifferenceKind = ok > safe ? "always" : ok < safe ? "never" : "indifferent";
    return { pStar: NaN, clipped: NaN, kind };
  }
  const pStar = (ok - safe) / (ok - fail);
  const clipped = Math.min(1, Math.max(0, pStar));
  let kind: IndifferenceKind;
  if (ok > fail) kind = pStar <= 0 ? "never" : pStar > 1 ? "always" : "threshold";
  else kind = pStar <= 0 ? "always" : pStar >= 1 ? "never" : "inverted";
  return { pStar, clipped, kind };
}

/** Does the designer reward prefer the risky behaviour at failure probability p? (Strict preference.) */
export function prefersRisk(l: Lottery, p: number): boolean {
  return (1 - p) * l.ok + p * l.fail > l.safe;
}

export interface RiskAuditInput {
  /** Per-outcome reward whose optimizer we ask about (normally a variant's designer reward). */
  reward: Float64Array;
  risky: Policy;
  safe: Policy;
  /** Catastrophic states: a 0/1 flag per state, or a list of state indices. */
  catastrophic: Uint8Array | readonly number[];
  /** Discount for the returns. Default: the model's gamma. (The failure probability is never discounted.) */
  gamma?: number;
  /** Policy-evaluation tolerance. Default 1e-12. */
  tol?: number;
}

export interface RiskAudit {
  /** Probability that the risky policy ever enters a catastrophic state, from the start distribution. */
  failProb: number;
  /** Same for the safe policy (it should be near 0 for the comparison to mean anything). */
  safeFailProb: number;
  /** Designer return of the risky policy, overall and conditioned on failing / not failing (NaN if the event has probability 0). */
  riskyReturn: number;
  failReturn: number;
  okReturn: number;
  safeReturn: number;
  /** p* for the lottery { ok: okReturn, fail: failReturn, safe: safeReturn }; null when the risky policy fails with probability 0 or 1 (one branch is undefined). */
  indifference: Indifference | null;
  /** failProb / p* when p* > 0: below 1 the reward still prefers the risk. */
  margin: number;
}

function catastrophicFlags(model: FiniteModel, c: Uint8Array | readonly number[]): Uint8Array {
  if (c instanceof Uint8Array) {
    if (c.length !== model.nStates) throw new InputError("input.catastrophic", `expected one flag per state (${model.nStates}), got ${c.length}`, "catastrophic");
    return c;
  }
  const flags = new Uint8Array(model.nStates);
  for (const s of c) {
    if (!(Number.isInteger(s) && s >= 0 && s < model.nStates)) {
      throw new InputError("input.catastrophic", `catastrophic state ${s} is outside 0..${model.nStates - 1}`, "catastrophic");
    }
    flags[s] = 1;
  }
  return flags;
}

/**
 * Probability of ever entering a catastrophic state under `policy`, per state (1 on catastrophic
 * states). Undiscounted evaluation of the indicator "this outcome enters a catastrophic state";
 * catastrophic states are treated as absorbing for this purpose.
 */
export function failureProbability(model: FiniteModel, policy: Policy, catastrophic: Uint8Array | readonly number[], tol = 1e-12): Float64Array {
  const flags = catastrophicFlags(model, catastrophic);
  const { nStates: nS, nActions: nA, saStart, next } = model;
  // Make catastrophic states terminal for this evaluation, and reward entering them with 1.
  const terminal = new Uint8Array(nS);
  for (let s = 0; s < nS; s++) terminal[s] = model.terminal[s] | flags[s];
  const indicator = new Float64Array(next.length);
  for (let s = 0; s < nS; s++) {
    if (terminal[s]) continue;
    for (let o = saStart[s * nA]; o < saStart[(s + 1) * nA]; o++) if (flags[next[o]]) indicator[o] = 1;
  }
  const view: FiniteModel = { ...model, terminal };
  const h = policyValues(view, indicator, policy, { gamma: 1, tol, accuracy: tol }).values;
  for (let s = 0; s < nS; s++) if (flags[s]) h[s] = 1;
  return h;
}

/** Evaluate a risky and a safe policy exactly and place them on the indifference scale. */
export function riskAudit(model: FiniteModel, input: RiskAuditInput): RiskAudit {
  const gamma = input.gamma ?? model.gamma;
  const tol = input.tol ?? 1e-12;
  const { reward } = input;
  if (reward.length !== model.next.length) {
    throw new InputError("input.reward", `reward has ${reward.length} entries, expected one per outcome (${model.next.length})`, "risk audit");
  }
  const flags = catastrophicFlags(model, input.catastrophic);
  for (let s = 0; s < model.nStates; s++) {
    if (flags[s] && !model.terminal[s]) {
      throw new InputError("input.catastrophic", `catastrophic state ${s} (${model.stateLabels[s]}) is not terminal; the risk audit needs catastrophes to end the episode`, "catastrophic");
    }
  }
  const h = failureProbability(model, input.risky, flags, tol);
  const hSafe = failureProbability(model, input.safe, flags, tol);
  // u(s) = E[G 1{fail} | s]: reward r_o * h(next_o) (catastrophic states are terminal, h = 1 there).
  const rh = new Float64Array(reward.length);
  for (let o = 0; o < reward.length; o++) rh[o] = reward[o] * h[model.next[o]];
  const evalOpts = { gamma, tol, accuracy: tol };
  const [V, u] = policyValuesMany(model, [reward, rh], input.risky, evalOpts).map((e) => e.values);
  const Vs = policyValues(model, reward, input.safe, evalOpts).values;
  const failProb = startValue(model, h);
  const riskyReturn = startValue(model, V);
  const uStart = startValue(model, u);
  const failReturn = failProb > 0 ? uStart / failProb : NaN;
  const okReturn = failProb < 1 ? (riskyReturn - uStart) / (1 - failProb) : NaN;
  const safeReturn = startValue(model, Vs);
  const indifference =
    Number.isFinite(failReturn) && Number.isFinite(okReturn) ? indifferenceProbability({ ok: okReturn, fail: failReturn, safe: safeReturn }) : null;
  const margin = indifference && indifference.pStar > 0 ? failProb / indifference.pStar : NaN;
  return { failProb, safeFailProb: startValue(model, hSafe), riskyReturn, failReturn, okReturn, safeReturn, indifference, margin };
}
