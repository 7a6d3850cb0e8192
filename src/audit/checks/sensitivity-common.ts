/**
 * What both weight-sensitivity methods (sensitivity.ts, parametric; sensitivity-bisection.ts, the
 * earlier step-and-bisect search kept for comparison) share: the result row, which features are
 * swept and at what scale, and the exact intent-optimality test of a deterministic policy.
 *
 * Intent-optimal: the policy picks, in every state it reaches from the start distribution, an action
 * whose intent action value equals the optimal intent value (Q_I*(s, pi(s)) >= V_I*(s) - 1e-9 (1 +
 * |V_I*(s)|)); for discounted models this is equivalent to V_I^pi = V_I* on the start distribution.
 * Pure; no I/O.
 */
import type { AuditContext } from "../context.js";
import type { FiniteModel } from "../../model/types.js";
import { actionValues } from "../../solve/sweeps.js";
import { ownValue } from "../../util/own.js";

export interface WeightInterval {
  feature: string;
  weight: number;
  okAtCurrent: boolean;
  /** When okAtCurrent: the interval [lo, hi] containing the current weight. */
  lo: number | null;
  hi: number | null;
  /** When not okAtCurrent: the nearest weight at which the policy becomes intent-optimal, or null. */
  fixAt: number | null;
  /** Distance from the current weight to the nearest edge (ok) or to fixAt (not ok); Infinity if none. */
  distance: number;
  /** Exact solves (bisection) or policy evaluations (parametric) spent on this feature. */
  probes: number;
  /** The weights the search covered, lowest and highest: w0 -+ SEARCH_SPAN * scale. */
  searched: [number, number];
}

/** Edges further than SEARCH_SPAN * scale from the current weight are reported as +-Infinity. */
export const SEARCH_SPAN = 64;

/** 1 per (s, a) whose action is intent-optimal in s (see the file comment); 0 on terminal states. */
export function intentOkActions(ctx: AuditContext): Uint8Array {
  const { model, gamma } = ctx;
  const nA = model.nActions;
  const vI = ctx.solve.intentOptimal.values;
  const qI = actionValues(model, model.intent, vI, gamma);
  const ok = new Uint8Array(model.nStates * nA);
  for (let s = 0; s < model.nStates; s++) {
    if (model.terminal[s]) continue;
    const v = vI[s];
    for (let a = 0; a < nA; a++) ok[s * nA + a] = qI[s * nA + a] >= v - 1e-9 * (1 + Math.abs(v)) ? 1 : 0;
  }
  return ok;
}

/** The features swept (default: weighted ones, plus unweighted ones when regret is flagged) and the largest |weight|. */
export function sweptFeatures(ctx: AuditContext, features?: string[]): { list: string[]; maxW: number } {
  const { model, variant } = ctx;
  const weights = Object.values(variant.weights).map(Math.abs).filter((x) => x > 0);
  const maxW = weights.length ? Math.max(...weights) : 1;
  const list = features ?? model.features.filter((f) => currentWeight(ctx, f) !== 0 || ctx.solve.regretNorm >= ctx.opts.regretWarning);
  return { list, maxW };
}

/** The variant's weight of `feature` (0 when unweighted); an own property only (names are data). */
export function currentWeight(ctx: AuditContext, feature: string): number {
  return ownValue(ctx.variant.weights, feature) ?? 0;
}

/** Search scale of a weight: |w0|, or the largest |weight| of the variant when w0 = 0. */
export function weightScale(w0: number, maxW: number): number {
  return w0 !== 0 ? Math.abs(w0) : maxW;
}

/** Scratch buffers for `reachesOnlyOk`. */
export function walkBuffers(nS: number): { seen: Uint8Array; stack: Int32Array } {
  return { seen: new Uint8Array(nS), stack: new Int32Array(nS) };
}

/** Does `pi` (action per state) pick an intent-optimal action in every state it reaches from the start distribution? */
export function reachesOnlyOk(model: FiniteModel, pi: Int32Array, okAction: Uint8Array, buf: { seen: Uint8Array; stack: Int32Array }): boolean {
  const { nActions: nA, saStart, next, prob, terminal } = model;
  const { seen, stack } = buf;
  seen.fill(0);
  let sp = 0;
  for (let s = 0; s < model.nStates; s++) if (model.start[s] > 0) ((seen[s] = 1), (stack[sp++] = s));
  while (sp > 0) {
    const s = stack[--sp];
    if (terminal[s]) continue;
    const k = s * nA + pi[s];
    if (!okAction[k]) return false;
    for (let o = saStart[k]; o < saStart[k + 1]; o++) {
      const t = next[o];
      if (prob[o] > 0 && !seen[t]) ((seen[t] = 1), (stack[sp++] = t));
    }
  }
  return true;
}

/** The result row from the two edges found around w0 (edges of the ok set when ok0, else where it starts). */
export function intervalRow(feature: string, w0: number, ok0: boolean, down: number, up: number, probes: number, span: number): WeightInterval {
  const searched: [number, number] = [w0 - span, w0 + span];
  if (ok0) return { feature, weight: w0, okAtCurrent: true, lo: down, hi: up, fixAt: null, distance: Math.min(w0 - down, up - w0), probes, searched };
  const cands = [down, up].filter((x) => Number.isFinite(x));
  const fixAt = cands.length ? cands.reduce((a, b) => (Math.abs(a - w0) <= Math.abs(b - w0) ? a : b)) : null;
  return { feature, weight: w0, okAtCurrent: false, lo: null, hi: null, fixAt, distance: fixAt === null ? Infinity : Math.abs(fixAt - w0), probes, searched };
}

/** Feature `f`'s value per outcome (the derivative of the designer reward in that feature's weight). */
export function featureColumn(model: FiniteModel, f: number): Float64Array {
  const nF = model.features.length;
  const col = new Float64Array(model.next.length);
  for (let o = 0; o < col.length; o++) col[o] = model.featureValues[o * nF + f];
  return col;
}
