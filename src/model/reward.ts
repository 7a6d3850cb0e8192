/**
 * Designer reward and intent as per-outcome vectors, precomputed once per variant so solvers and
 * learners read one Float64Array in their inner loops.
 */
import { InputError } from "../errors.js";
import type { FiniteModel, RewardVariant } from "./types.js";
import { ownValue } from "../util/own.js";
import { clip, hint, jsonPath, type Path } from "./format/json-errors.js";

/** Resolve a variant's shaping potential to Phi per state (Phi(terminal) treated as 0 by callers). */
export function resolvePotential(model: FiniteModel, variant: RewardVariant): Float64Array | null {
  const sh = variant.shaping;
  if (!sh) return null;
  if (typeof sh.potential === "string") {
    const phi = ownValue(model.potentials, sh.potential);
    if (!phi) {
      const known = Object.keys(model.potentials ?? {});
      throw new InputError(
        "reward.potential",
        `shaping potential "${sh.potential}" is not provided by ${model.name}; known: ${known.length ? known.join(", ") : "none"}`,
        `reward ${variant.name} $.shaping.potential`,
      );
    }
    return phi;
  }
  if (sh.potential.length !== model.nStates) {
    throw new InputError(
      "reward.potential",
      `shaping potential has ${sh.potential.length} entries, expected one per state (${model.nStates})`,
      `reward ${variant.name} $.shaping.potential`,
    );
  }
  return Float64Array.from(sh.potential);
}

/** Bound on the magnitude of a weight, a shaping scale or a potential value (keeps every return finite). */
export const MAX_WEIGHT = 1e12;

/** Where a variant's problems are: its reward file, or the variant of the model. */
function variantWhere(variant: RewardVariant, path: Path): string {
  return `${variant.source ?? `reward ${variant.name}`} ${jsonPath(path)}`;
}

/** Check that every weighted feature exists in the model and every number is finite and bounded. */
export function checkVariant(model: FiniteModel, variant: RewardVariant): void {
  for (const f of Object.keys(variant.weights)) {
    if (!model.features.includes(f)) {
      throw new InputError(
        "reward.unknownFeature",
        `weight for unknown feature ${JSON.stringify(clip(f))}${hint(f, model.features)}; ${model.name} has features: ${model.features.length ? model.features.map((x) => clip(x)).join(", ") : "none"}`,
        variantWhere(variant, ["weights", f]),
      );
    }
    const w = ownValue(variant.weights, f);
    if (!(typeof w === "number" && Math.abs(w) <= MAX_WEIGHT)) {
      throw new InputError("reward.weight", `weight of ${JSON.stringify(clip(f))} is ${String(w)}; give a finite number within +-${MAX_WEIGHT}`, variantWhere(variant, ["weights", f]));
    }
  }
  const sh = variant.shaping;
  if (sh) {
    if (!(Math.abs(sh.scale) <= MAX_WEIGHT)) throw new InputError("reward.shaping", `shaping scale ${sh.scale} is not a finite number within +-${MAX_WEIGHT}`, variantWhere(variant, ["shaping", "scale"]));
    if (Array.isArray(sh.potential)) {
      const i = sh.potential.findIndex((x) => !(Math.abs(x) <= MAX_WEIGHT));
      if (i >= 0) throw new InputError("reward.shaping", `potential value ${sh.potential[i]} is not a finite number within +-${MAX_WEIGHT}`, variantWhere(variant, ["shaping", "potential", i]));
    }
  }
}

/**
 * Designer reward per outcome: sum_f w_f * feature_f, plus
 * `scale * (gamma * Phi(s') - Phi(s))` with Phi(terminal) = 0 (so shaping cannot change which policy is
 * optimal in episodic tasks; Ng, Harada & Russell 1999). Terminal self-loops get 0.
 */
export function designerReward(model: FiniteModel, variant: RewardVariant, gamma = model.gamma): Float64Array {
  checkVariant(model, variant);
  const nF = model.features.length;
  const w = new Float64Array(nF);
  model.features.forEach((f, i) => (w[i] = ownValue(variant.weights, f) ?? 0));
  const nO = model.next.length;
  const r = new Float64Array(nO);
  for (let o = 0; o < nO; o++) {
    let acc = 0;
    const base = o * nF;
    for (let f = 0; f < nF; f++) if (w[f] !== 0) acc += w[f] * model.featureValues[base + f];
    r[o] = acc;
  }
  const phi = resolvePotential(model, variant);
  if (phi && variant.shaping) {
    const scale = variant.shaping.scale;
    const nA = model.nActions;
    for (let s = 0; s < model.nStates; s++) {
      if (model.terminal[s]) continue;
      for (let k = s * nA; k < (s + 1) * nA; k++) {
        for (let o = model.saStart[k]; o < model.saStart[k + 1]; o++) {
          const sp = model.next[o];
          const phiNext = model.terminal[sp] ? 0 : phi[sp];
          r[o] += scale * (gamma * phiNext - phi[s]);
        }
      }
    }
  }
  for (let s = 0; s < model.nStates; s++) {
    if (!model.terminal[s]) continue;
    for (let k = s * model.nActions; k < (s + 1) * model.nActions; k++) r[model.saStart[k]] = 0;
  }
  return r;
}

/** Expected value of a per-outcome quantity for each (s, a): sum_o p_o * x_o. Length nStates * nActions. */
export function expectedPerStateAction(model: FiniteModel, perOutcome: Float64Array): Float64Array {
  const nSA = model.nStates * model.nActions;
  const out = new Float64Array(nSA);
  for (let k = 0; k < nSA; k++) {
    let acc = 0;
    for (let o = model.saStart[k]; o < model.saStart[k + 1]; o++) acc += model.prob[o] * perOutcome[o];
    out[k] = acc;
  }
  return out;
}

/** The variant a command uses when none is named: `default` if present, else the first one listed. */
export function defaultVariantName(model: FiniteModel): string | undefined {
  const names = Object.keys(model.variants ?? {});
  return names.includes("default") ? "default" : names[0];
}
