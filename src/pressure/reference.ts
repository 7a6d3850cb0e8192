/**
 * Reading a reference policy for `gapwatch pressure --reference FILE`. Accepted shapes (JSON):
 *  - {"policy": [a_0, a_1, ...]}: one action per state, as an index or an action name (null/-1 on
 *    terminal states);
 *  - {"policy": [[p_00, p_01, ...], ...]}: action probabilities per state;
 *  - the same arrays under "greedy" or "actions", or nested one level (e.g. {"agent": {"policy": ...}}).
 * A deterministic policy is smoothed, pi0 = (1 - eps) pi + eps * uniform with eps = 0.1 (our default),
 * so that a soft-optimal policy can move away from it: KL control toward a one-hot reference cannot
 * leave its support. Pure apart from `readReferenceFile`.
 */
import { readFileSync } from "node:fs";
import { InputError } from "../errors.js";
import type { FiniteModel } from "../model/types.js";
import type { Policy } from "../solve/sweeps.js";

export const REFERENCE_SMOOTHING = 0.1;

function findArray(doc: unknown, depth = 0): unknown[] | null {
  if (!doc || typeof doc !== "object") return null;
  const o = doc as Record<string, unknown>;
  for (const k of ["policy", "greedy", "actions", "probabilities"]) if (Array.isArray(o[k])) return o[k] as unknown[];
  if (depth < 2) for (const v of Object.values(o)) {
    const r = findArray(v, depth + 1);
    if (r) return r;
  }
  return null;
}

export function parseReferencePolicy(model: FiniteModel, doc: unknown, where: string, eps = REFERENCE_SMOOTHING): Policy {
  const arr = findArray(doc);
  if (!arr) throw new InputError("input.referencePolicy", `no "policy" array found; expected {"policy": [action per state]} or probabilities per state`, where);
  const nS = model.nStates;
  const nA = model.nActions;
  if (arr.length !== nS) throw new InputError("input.referencePolicy", `policy has ${arr.length} entries, expected one per state (${nS}) of ${model.name}`, `${where} $.policy`);
  const p = new Float64Array(nS * nA);
  for (let s = 0; s < nS; s++) {
    const x = arr[s];
    if (Array.isArray(x)) {
      if (x.length !== nA) throw new InputError("input.referencePolicy", `state ${s} has ${x.length} probabilities, expected ${nA}`, `${where} $.policy[${s}]`);
      let sum = 0;
      for (let a = 0; a < nA; a++) {
        const v = Number(x[a]);
        if (!(v >= 0)) throw new InputError("input.referencePolicy", `probability ${x[a]} is not a non-negative number`, `${where} $.policy[${s}][${a}]`);
        p[s * nA + a] = v;
        sum += v;
      }
      if (model.terminal[s]) continue;
      if (Math.abs(sum - 1) > 1e-6) throw new InputError("input.referencePolicy", `probabilities of state ${s} sum to ${sum}, expected 1`, `${where} $.policy[${s}]`);
      for (let a = 0; a < nA; a++) p[s * nA + a] /= sum;
      continue;
    }
    let a = -1;
    if (typeof x === "number" && Number.isInteger(x)) a = x;
    else if (typeof x === "string") a = model.actions.indexOf(x);
    else if (x === null) a = -1;
    else throw new InputError("input.referencePolicy", `entry ${JSON.stringify(x)} is neither an action nor a probability row`, `${where} $.policy[${s}]`);
    if (a < 0 || a >= nA) {
      if (model.terminal[s] || x === null || x === -1) {
        for (let b = 0; b < nA; b++) p[s * nA + b] = 1 / nA;
        continue;
      }
      throw new InputError("input.referencePolicy", `action ${JSON.stringify(x)} is not one of ${model.actions.join(", ")}`, `${where} $.policy[${s}]`);
    }
    for (let b = 0; b < nA; b++) p[s * nA + b] = eps / nA + (b === a ? 1 - eps : 0);
  }
  return p;
}

export function readReferenceFile(model: FiniteModel, file: string): Policy {
  let doc: unknown;
  try {
    doc = JSON.parse(readFileSync(file, "utf8"));
  } catch (e) {
    throw new InputError("input.referencePolicy", `cannot read reference policy: ${(e as Error).message}`, file);
  }
  return parseReferencePolicy(model, doc, file);
}
