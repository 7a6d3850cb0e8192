/**
 * ModelBuilder: collect outcomes in any order, then `build()` validates and packs them into the CSR
 * arrays of a FiniteModel. Grid, track, model-file and simulator-module compilers all go through it,
 * so every model satisfies the same invariants:
 *  - every non-terminal (s, a) has at least one outcome, probabilities in [0, 1] summing to 1 within 1e-9;
 *  - terminal states are absorbing (the builder writes their self-loops itself);
 *  - the start distribution sums to 1 within 1e-9;
 *  - every feature value and intent increment is finite.
 */
import { InputError } from "../errors.js";
import type { FiniteModel, Layout, RewardVariant } from "./types.js";

export interface ModelSpec {
  name: string;
  nStates: number;
  actions: readonly string[];
  features: readonly string[];
  gamma: number;
  horizon: number;
  stateLabels?: readonly string[];
  description?: string;
  source?: string;
}

export const PROB_TOLERANCE = 1e-9;

/** The outcome arrays of a FiniteModel (see ./types.ts for the layout). */
export interface CsrArrays {
  terminal: Uint8Array;
  start: Float64Array;
  saStart: Int32Array;
  next: Int32Array;
  prob: Float64Array;
  featureValues: Float64Array;
  intent: Float64Array;
}

/** What a model may carry besides its dynamics. */
export interface ModelExtras {
  groups?: (string | null)[];
  potentials?: Record<string, Float64Array>;
  observations?: { dim: number; names: string[]; values: Float64Array };
  variants?: Record<string, RewardVariant>;
  layout?: Layout;
}

export class ModelBuilder {
  private readonly spec: ModelSpec;
  private readonly nA: number;
  private readonly nF: number;
  private readonly terminal: Uint8Array;
  private readonly start: Float64Array;
  private count = 0;
  private sa: Int32Array;
  private nxt: Int32Array;
  private pr: Float64Array;
  private feat: Float64Array;
  private intent: Float64Array;
  private extras: ModelExtras = {};

  constructor(spec: ModelSpec) {
    if (!Number.isInteger(spec.nStates) || spec.nStates < 1) {
      throw new InputError("model.states", `a model needs at least one state, got ${spec.nStates}`, spec.source ?? spec.name);
    }
    if (spec.actions.length < 1) throw new InputError("model.actions", "a model needs at least one action", spec.source ?? spec.name);
    this.spec = spec;
    this.nA = spec.actions.length;
    this.nF = spec.features.length;
    this.terminal = new Uint8Array(spec.nStates);
    this.start = new Float64Array(spec.nStates);
    const cap = Math.max(16, spec.nStates * this.nA);
    this.sa = new Int32Array(cap);
    this.nxt = new Int32Array(cap);
    this.pr = new Float64Array(cap);
    this.feat = new Float64Array(cap * Math.max(1, this.nF));
    this.intent = new Float64Array(cap);
  }

  get nStates(): number {
    return this.spec.nStates;
  }

  setTerminal(s: number): this {
    this.checkState(s, "terminal");
    this.terminal[s] = 1;
    return this;
  }

  setStart(s: number, p: number): this {
    this.checkState(s, "start");
    this.start[s] = p;
    return this;
  }

  /** Add one outcome of (s, a). `features` is indexed like `spec.features` (missing entries are 0). */
  addOutcome(s: number, a: number, next: number, p: number, features: ArrayLike<number> | null, intent = 0): this {
    if (this.count === this.sa.length) this.grow();
    const i = this.count++;
    this.sa[i] = s * this.nA + a;
    this.nxt[i] = next;
    this.pr[i] = p;
    const base = i * this.nF;
    if (features) for (let f = 0; f < this.nF; f++) this.feat[base + f] = features[f] ?? 0;
    this.intent[i] = intent;
    return this;
  }

  setGroups(groups: (string | null)[]): this {
    this.extras.groups = groups;
    return this;
  }
  setPotential(name: string, phi: Float64Array): this {
    (this.extras.potentials ??= {})[name] = phi;
    return this;
  }
  setObservations(names: string[], values: Float64Array): this {
    this.extras.observations = { dim: names.length, names, values };
    return this;
  }
  setVariants(variants: Record<string, RewardVariant>): this {
    this.extras.variants = variants;
    return this;
  }
  setLayout(layout: Layout): this {
    this.extras.layout = layout;
    return this;
  }

  build(): FiniteModel {
    const { nStates: nS } = this.spec;
    const nA = this.nA;
    const nF = this.nF;
    const where = this.spec.source ?? this.spec.name;
    const nSA = nS * nA;
    // Count outcomes per (s, a); terminal rows are replaced by one self-loop each.
    const counts = new Int32Array(nSA);
    for (let i = 0; i < this.count; i++) {
      const k = this.sa[i];
      const s = (k / nA) | 0;
      this.checkState(s, "transition state");
      this.checkState(this.nxt[i], "next state");
      if (!this.terminal[s]) counts[k]++;
    }
    for (let s = 0; s < nS; s++) if (this.terminal[s]) for (let a = 0; a < nA; a++) counts[s * nA + a] = 1;
    const saStart = new Int32Array(nSA + 1);
    for (let k = 0; k < nSA; k++) {
      if (counts[k] === 0) {
        const s = (k / nA) | 0;
        throw new InputError(
          "model.missingTransition",
          `state ${s} (${this.label(s)}) action ${k % nA} (${this.spec.actions[k % nA]}) has no outcomes; every non-terminal state-action pair needs at least one`,
          where,
        );
      }
      saStart[k + 1] = saStart[k] + counts[k];
    }
    const nO = saStart[nSA];
    const next = new Int32Array(nO);
    const prob = new Float64Array(nO);
    const featureValues = new Float64Array(nO * nF);
    const intent = new Float64Array(nO);
    const fill = saStart.slice(0, nSA);
    for (let i = 0; i < this.count; i++) {
      const k = this.sa[i];
      const s = (k / nA) | 0;
      if (this.terminal[s]) continue;
      const o = fill[k]++;
      next[o] = this.nxt[i];
      prob[o] = this.pr[i];
      intent[o] = this.intent[i];
      for (let f = 0; f < nF; f++) featureValues[o * nF + f] = this.feat[i * nF + f];
    }
    for (let s = 0; s < nS; s++) {
      if (!this.terminal[s]) continue;
      for (let a = 0; a < nA; a++) {
        const o = saStart[s * nA + a];
        next[o] = s;
        prob[o] = 1;
      }
    }
    return ModelBuilder.fromCsr(this.spec, { terminal: this.terminal, start: this.start, saStart, next, prob, featureValues, intent }, this.extras);
  }

  /**
   * Validate CSR arrays (laid out as FiniteModel documents them, terminal rows already one self-loop)
   * and assemble the model. `build()` ends here; so do loaders that fill the arrays themselves (the
   * model-file fast path, the compact binary format), so every model passes the same checks.
   */
  static fromCsr(spec: ModelSpec, csr: CsrArrays, extras: ModelExtras = {}): FiniteModel {
    const { terminal, start, saStart, next, prob, featureValues, intent } = csr;
    const nS = spec.nStates;
    const nA = spec.actions.length;
    const nF = spec.features.length;
    const where = spec.source ?? spec.name;
    const nSA = nS * nA;
    const label = (s: number): string => spec.stateLabels?.[s] ?? String(s);
    const saLabel = (k: number): string => {
      const s = (k / nA) | 0;
      return `state ${s} (${label(s)}) action ${spec.actions[k % nA]}`;
    };
    const nO = next.length;
    if (terminal.length !== nS || start.length !== nS || saStart.length !== nSA + 1 || saStart[0] !== 0 || saStart[nSA] !== nO || prob.length !== nO || intent.length !== nO || featureValues.length !== nO * nF) {
      throw new InputError("model.arrays", `array lengths do not fit ${nS} states, ${nA} actions, ${nF} features and ${nO} outcomes`, where);
    }
    for (let k = 0; k < nSA; k++) {
      if (!(saStart[k + 1] > saStart[k])) {
        const s = (k / nA) | 0;
        throw new InputError(
          "model.missingTransition",
          `state ${s} (${label(s)}) action ${k % nA} (${spec.actions[k % nA]}) has no outcomes; every non-terminal state-action pair needs at least one`,
          where,
        );
      }
    }
    for (let o = 0; o < nO; o++) {
      const sp = next[o];
      if (!(sp >= 0 && sp < nS)) throw new InputError("model.stateIndex", `next state index ${sp} is outside 0..${nS - 1}`, where);
    }
    for (let s = 0; s < nS; s++) {
      if (!terminal[s]) continue;
      for (let k = s * nA; k < (s + 1) * nA; k++) {
        const o = saStart[k];
        let zero = saStart[k + 1] === o + 1 && next[o] === s && prob[o] === 1 && intent[o] === 0;
        for (let f = 0; f < nF && zero; f++) zero = featureValues[o * nF + f] === 0;
        if (!zero) throw new InputError("model.terminal", `${saLabel(k)} is terminal but is not one self-loop with probability 1, zero features and zero intent`, where);
      }
    }
    // Validate probabilities and finiteness.
    for (let k = 0; k < nSA; k++) {
      let sum = 0;
      for (let o = saStart[k]; o < saStart[k + 1]; o++) {
        const p = prob[o];
        if (!(p >= 0 && p <= 1 + PROB_TOLERANCE)) {
          throw new InputError("model.probability", `probability ${p} of an outcome of ${saLabel(k)} is outside [0, 1]`, where);
        }
        if (!Number.isFinite(intent[o])) throw new InputError("model.intent", `intent of an outcome of ${saLabel(k)} is not finite (${intent[o]})`, where);
        for (let f = 0; f < nF; f++) {
          const v = featureValues[o * nF + f];
          if (!Number.isFinite(v)) {
            throw new InputError("model.feature", `feature "${spec.features[f]}" of an outcome of ${saLabel(k)} is not finite (${v})`, where);
          }
        }
        sum += p;
      }
      if (Math.abs(sum - 1) > PROB_TOLERANCE) {
        throw new InputError("model.probabilitySum", `outcome probabilities of ${saLabel(k)} sum to ${sum}, expected 1 (within ${PROB_TOLERANCE})`, where);
      }
    }
    let startSum = 0;
    for (let s = 0; s < nS; s++) {
      if (!(start[s] >= 0)) throw new InputError("model.start", `start probability of state ${s} is ${start[s]}`, where);
      startSum += start[s];
    }
    if (Math.abs(startSum - 1) > PROB_TOLERANCE) {
      throw new InputError("model.startSum", `start probabilities sum to ${startSum}, expected 1 (within ${PROB_TOLERANCE})`, where);
    }
    if (!(spec.gamma > 0 && spec.gamma <= 1)) {
      throw new InputError("model.gamma", `gamma must be in (0, 1], got ${spec.gamma}`, where);
    }
    if (!(Number.isInteger(spec.horizon) && spec.horizon >= 1)) {
      throw new InputError("model.horizon", `horizon must be a positive integer, got ${spec.horizon}`, where);
    }
    const stateLabels = spec.stateLabels ?? Array.from({ length: nS }, (_, s) => String(s));
    if (stateLabels.length !== nS) {
      throw new InputError("model.stateLabels", `expected ${nS} state labels, got ${stateLabels.length}`, where);
    }
    return {
      name: spec.name,
      gamma: spec.gamma,
      nStates: nS,
      nActions: nA,
      actions: [...spec.actions],
      stateLabels,
      features: [...spec.features],
      terminal,
      start,
      saStart,
      next,
      prob,
      featureValues: compactExact(featureValues),
      intent,
      horizon: spec.horizon,
      description: spec.description,
      source: spec.source,
      ...extras,
    };
  }

  private grow(): void {
    const cap = this.sa.length * 2;
    const grow32 = (a: Int32Array) => {
      const b = new Int32Array(cap);
      b.set(a);
      return b;
    };
    const grow64 = (a: Float64Array, stride = 1) => {
      const b = new Float64Array(cap * stride);
      b.set(a);
      return b;
    };
    this.sa = grow32(this.sa);
    this.nxt = grow32(this.nxt);
    this.pr = grow64(this.pr);
    this.feat = grow64(this.feat, Math.max(1, this.nF));
    this.intent = grow64(this.intent);
  }

  private checkState(s: number, what: string): void {
    if (!Number.isInteger(s) || s < 0 || s >= this.spec.nStates) {
      throw new InputError("model.stateIndex", `${what} index ${s} is outside 0..${this.spec.nStates - 1}`, this.spec.source ?? this.spec.name);
    }
  }
  private label(s: number): string {
    return this.spec.stateLabels?.[s] ?? String(s);
  }
}

/**
 * `values` as a Float32Array when every value is exactly a float32 (reading it back gives the same
 * double: 0/1 indicators, small integers, dyadic fractions), else `values` itself. Halves the largest
 * per-outcome array of a model with several indicator features (1M-state grids).
 */
export function compactExact(values: Float64Array): Float64Array | Float32Array {
  for (let i = 0; i < values.length; i++) if (Math.fround(values[i]) !== values[i]) return values;
  return Float32Array.from(values);
}
