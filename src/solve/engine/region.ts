/**
 * The chain of a policy restricted to a set of live states (a "region"): rows are the region's states,
 * edges the successors inside the region, and every other successor (a terminal state, or a live
 * state outside the region whose value is held fixed) kept apart as an outside edge. Solving the
 * region's rows with the outside values folded into the reward gives the policy's values on the
 * region given the values outside it (evaluate.ts `evaluateOnStates`, local.ts `startValuesEngine`).
 * Pure; no I/O.
 */
import type { FiniteModel } from "../../model/types.js";
import type { PolicyChain } from "../evaluation.js";
import { expectedRewardAt, type Policy } from "../sweeps.js";
import { solveOrder, type SolveOrder } from "./order.js";

/** Which actions a state takes: a stochastic policy (nStates * nActions) or one action per state. */
export type ActionChoice = { policy: Policy } | { actions: Int32Array };

export interface RegionChain {
  /** Rows are `states` in the given order; columns are rows; weights pi(a|s) p(s'|s, a) merged. */
  chain: PolicyChain;
  /** 1 where a row has a successor outside the region (its in-region weights sum to less than 1). */
  exits: Uint8Array;
  /** Outside edges per row (CSR): the state left to and the probability of going there. */
  outStart: Int32Array;
  outState: Int32Array;
  outProb: Float64Array;
}

/** pi(a | s) of the choice. */
function weightOf(choice: ActionChoice, s: number, a: number, nA: number): number {
  return "policy" in choice ? choice.policy[s * nA + a] : choice.actions[s] === a ? 1 : 0;
}

/**
 * Build the region chain of `states` (live states, each once). `scratch` is an Int32Array(nStates)
 * filled with -1; it is restored before returning.
 */
export function regionChain(model: FiniteModel, choice: ActionChoice, states: Int32Array, scratch: Int32Array): RegionChain {
  const { saStart, next, prob } = model;
  const nA = model.nActions;
  const n = states.length;
  const rowOf = scratch;
  for (let i = 0; i < n; i++) rowOf[states[i]] = i;
  let cap = 0;
  for (let i = 0; i < n; i++) {
    const s = states[i];
    for (let a = 0; a < nA; a++) if (weightOf(choice, s, a, nA) !== 0) cap += saStart[s * nA + a + 1] - saStart[s * nA + a];
  }
  const rowStart = new Int32Array(n + 1);
  const col = new Int32Array(cap);
  const weight = new Float64Array(cap);
  const self = new Float64Array(n);
  const exits = new Uint8Array(n);
  const outStart = new Int32Array(n + 1);
  const outState = new Int32Array(cap);
  const outProb = new Float64Array(cap);
  const slot = new Int32Array(n).fill(-1);
  let e = 0;
  let f = 0;
  for (let i = 0; i < n; i++) {
    const s = states[i];
    rowStart[i] = e;
    outStart[i] = f;
    let kept = 0;
    for (let a = 0; a < nA; a++) {
      const pa = weightOf(choice, s, a, nA);
      if (pa === 0) continue;
      for (let q = saStart[s * nA + a]; q < saStart[s * nA + a + 1]; q++) {
        const p = pa * prob[q];
        if (p === 0) continue;
        const t = next[q];
        const row = rowOf[t];
        if (row < 0) {
          outState[f] = t;
          outProb[f++] = p;
          continue;
        }
        kept += p;
        if (row === i) self[i] += p;
        else if (slot[row] >= 0) weight[slot[row]] += p;
        else {
          slot[row] = e;
          col[e] = row;
          weight[e++] = p;
        }
      }
    }
    if (kept < 1 - 1e-12) exits[i] = 1;
    for (let c = rowStart[i]; c < e; c++) slot[col[c]] = -1;
  }
  rowStart[n] = e;
  outStart[n] = f;
  for (let i = 0; i < n; i++) rowOf[states[i]] = -1;
  const chain: PolicyChain = { nStates: model.nStates, states, rowStart, col: col.subarray(0, e), weight: weight.subarray(0, e), self };
  return { chain, exits, outStart, outState: outState.subarray(0, f), outProb: outProb.subarray(0, f) };
}

/** A reward given per (s, a) (expected, nStates * nActions) or per outcome (the model's outcome order). */
export type RowRewardSource = { perAction: Float64Array } | { perOutcome: Float64Array };

/**
 * Per row: the policy's expected one-step reward (`reward`, or null for 0) plus gamma times the
 * expected held value outside (`held`: state-indexed, or null for 0).
 */
export function regionReward(model: FiniteModel, choice: ActionChoice, region: RegionChain, reward: RowRewardSource | null, held: Float64Array | null, gamma: number): Float64Array {
  const nA = model.nActions;
  const { states } = region.chain;
  const { outStart, outState, outProb } = region;
  const rsa = reward && "perAction" in reward ? reward.perAction : null;
  const ro = reward && "perOutcome" in reward ? reward.perOutcome : null;
  const r = new Float64Array(states.length);
  for (let i = 0; i < states.length; i++) {
    const s = states[i];
    let acc = 0;
    for (let a = 0; reward && a < nA; a++) {
      const pa = weightOf(choice, s, a, nA);
      if (pa === 0) continue;
      const k = s * nA + a;
      if (rsa) acc += pa * rsa[k];
      else if (ro) acc += pa * expectedRewardAt(model, ro, k);
    }
    if (held) for (let f = outStart[i]; f < outStart[i + 1]; f++) acc += gamma * outProb[f] * held[outState[f]];
    r[i] = acc;
  }
  return r;
}

/** The engine's solve order of a region's rows (order.ts): components, sinks first, exits counted. */
export function regionOrder(region: RegionChain): SolveOrder {
  const { chain, exits } = region;
  return solveOrder({ n: chain.states.length, rowStart: chain.rowStart, col: chain.col }, exits);
}
