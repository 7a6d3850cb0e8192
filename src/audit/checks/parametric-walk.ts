/**
 * The policy walk of the parametric weight sensitivity (sensitivity.ts, where the method and its
 * sources are described): a deterministic policy of the designer MDP whose reward is r0 + t phi, its
 * values V0 + t Vf and action values q0 + t qf, kept on the live states reachable from the start under
 * any actions (a set closed under every action's outcomes, so its values never read a state outside it).
 *
 * Incremental: when an improvement step changes the action of some states, the only values that change
 * are those of the states that reach a changed state under the new policy (the upstream set; every other
 * state reaches only unchanged states). Those are re-solved with the rest held (engine
 * `evaluateOnStates`, exact per component up to EVAL_ACCURACY), and only the action values of the
 * state-action pairs with an outcome in the upstream set are recomputed. Errors do not pile up: a
 * re-solve is within EVAL_ACCURACY of the exact values given the held ones, and the held ones move it
 * by at most gamma times their own error, so every value stays within EVAL_ACCURACY / (1 - gamma) of
 * exact (1e-10 at gamma 0.99), far inside the tie tolerance TIE. Pure; no I/O.
 */
import type { FiniteModel } from "../../model/types.js";
import { evaluateOnStates } from "../../solve/engine/index.js";

/** Accuracy of the policy evaluations (max-norm, proven by the engine). */
const EVAL_ACCURACY = 1e-12;
/** Relative tolerance of a tie between two action values (or slopes). */
const TIE = 1e-9;
/** Cap on policy-iteration rounds at one point. */
const MAX_ROUNDS = 200;

/** One point of the walk: policy, V0/Vf per state, q0/qf and the feature's expected value per (s, a). */
export interface WalkState {
  pi: Int32Array;
  v0: Float64Array;
  vf: Float64Array;
  q0: Float64Array;
  qf: Float64Array;
  fexp: Float64Array;
}

export class ParametricWalk {
  private readonly live: Int32Array;
  /** For each state t, the (s, a) pairs of live sources with an outcome into t (CSR). */
  private readonly revStart: Int32Array;
  private readonly revPair: Int32Array;
  private readonly mark: Int32Array;
  private epoch = 0;
  private readonly queue: Int32Array;
  private readonly changed: Int32Array;
  private readonly rowScratch: Int32Array;
  private evaluations = 0;

  constructor(
    private readonly model: FiniteModel,
    reachable: Uint8Array,
    private readonly rBase: Float64Array,
    private readonly gamma: number,
  ) {
    const { nStates: nS, nActions: nA, saStart, next, prob, terminal } = model;
    const liveList: number[] = [];
    for (let s = 0; s < nS; s++) if (reachable[s] && !terminal[s]) liveList.push(s);
    this.live = Int32Array.from(liveList);
    const revStart = new Int32Array(nS + 1);
    for (const s of this.live) for (let o = saStart[s * nA]; o < saStart[(s + 1) * nA]; o++) if (prob[o] > 0) revStart[next[o] + 1]++;
    for (let t = 0; t < nS; t++) revStart[t + 1] += revStart[t];
    const fill = revStart.slice(0, nS);
    const revPair = new Int32Array(revStart[nS]);
    for (const s of this.live)
      for (let k = s * nA; k < (s + 1) * nA; k++) for (let o = saStart[k]; o < saStart[k + 1]; o++) if (prob[o] > 0) revPair[fill[next[o]]++] = k;
    this.revStart = revStart;
    this.revPair = revPair;
    this.mark = new Int32Array(nS);
    this.queue = new Int32Array(nS);
    this.changed = new Int32Array(nS);
    this.rowScratch = new Int32Array(nS).fill(-1);
  }

  /** Evaluations (full or upstream re-solves) since the last call. */
  takeEvaluations(): number {
    const n = this.evaluations;
    this.evaluations = 0;
    return n;
  }

  /** Does the feature (expected value per (s, a)) move any reachable action value? */
  moves(fexp: Float64Array): boolean {
    const nA = this.model.nActions;
    for (const s of this.live) for (let k = s * nA; k < (s + 1) * nA; k++) if (fexp[k] !== 0) return true;
    return false;
  }

  /** The walk's start: `policy` evaluated on r0, improved at t = 0 (ties: lowest index); no feature yet. */
  start(policy: Int32Array): WalkState {
    const { nStates: nS, nActions: nA } = this.model;
    const st: WalkState = {
      pi: Int32Array.from(policy),
      v0: new Float64Array(nS),
      vf: new Float64Array(nS),
      q0: new Float64Array(nS * nA),
      qf: new Float64Array(nS * nA),
      fexp: new Float64Array(nS * nA),
    };
    this.solveOn(st, this.live, [this.rBase], [st.v0]);
    this.actionValues(st, this.live);
    this.solveAt(st, 0, 0);
    this.takeEvaluations();
    return st;
  }

  /** `base` (from `start`) with the feature's slopes Vf and qf: one evaluation. */
  withFeature(base: WalkState, fexp: Float64Array): WalkState {
    const st = this.copy(base);
    st.fexp = fexp;
    st.vf.fill(0);
    this.solveOn(st, this.live, [fexp], [st.vf]);
    this.actionValues(st, this.live);
    return st;
  }

  copy(st: WalkState): WalkState {
    return { pi: st.pi.slice(), v0: st.v0.slice(), vf: st.vf.slice(), q0: st.q0.slice(), qf: st.qf.slice(), fexp: st.fexp };
  }

  /** Policy iteration at t (in place) to the policy optimal at t + dir * 0 (dir = 0: at t, lowest index on ties). */
  solveAt(st: WalkState, t: number, dir: number): void {
    for (let round = 0; round < MAX_ROUNDS; round++) {
      const n = this.improve(st, t, dir);
      if (n === 0) return;
      this.update(st, n);
    }
  }

  /** The nearest t beyond tCur (direction dir) where some action catches up with pi; +-Infinity if none. */
  nextEdge(st: WalkState, tCur: number, dir: number): number {
    const nA = this.model.nActions;
    const { pi, q0, qf } = st;
    let te = dir * Infinity;
    for (const s of this.live) {
      const kp = s * nA + pi[s];
      for (let k = s * nA; k < (s + 1) * nA; k++) {
        const m = qf[k] - qf[kp];
        if (dir * m <= TIE * (1 + Math.abs(qf[kp]))) continue;
        let root = -(q0[k] - q0[kp]) / m;
        if (dir * (root - tCur) < 0) root = tCur;
        if (dir * (root - te) < 0) te = root;
      }
    }
    return te;
  }

  /** One improvement step at t, comparing (Q(t), dir * slope, -index); the changed states go to `changed`, their count returned. */
  private improve(st: WalkState, t: number, dir: number): number {
    const nA = this.model.nActions;
    const { pi, v0, vf, q0, qf } = st;
    let n = 0;
    for (const s of this.live) {
      const base = s * nA;
      const tolV = TIE * (1 + Math.abs(v0[s] + t * vf[s]));
      const tolM = TIE * (1 + Math.abs(vf[s]));
      let b = pi[s];
      for (let a = 0; a < nA; a++) {
        if (a === b) continue;
        const dv = q0[base + a] - q0[base + b] + t * (qf[base + a] - qf[base + b]);
        if (dv < -tolV) continue;
        if (dv <= tolV) {
          const dm = dir * (qf[base + a] - qf[base + b]);
          if (dm < -tolM) continue;
          if (dm <= tolM && a > b) continue;
        }
        b = a;
      }
      if (b !== pi[s]) {
        pi[s] = b;
        this.changed[n++] = s;
      }
    }
    return n;
  }

  /** New values after the first `n` entries of `changed` changed action: re-solve their upstream set only. */
  private update(st: WalkState, n: number): void {
    const { nActions: nA } = this.model;
    const { revStart, revPair, mark, queue, changed } = this;
    const stamp = ++this.epoch;
    let len = 0;
    for (let i = 0; i < n; i++) {
      mark[changed[i]] = stamp;
      queue[len++] = changed[i];
    }
    for (let h = 0; h < len; h++) {
      const t = queue[h];
      for (let e = revStart[t]; e < revStart[t + 1]; e++) {
        const k = revPair[e];
        const s = (k / nA) | 0;
        if (mark[s] === stamp || k - s * nA !== st.pi[s]) continue;
        mark[s] = stamp;
        queue[len++] = s;
      }
    }
    const upstream = queue.slice(0, len);
    this.solveOn(st, upstream, [this.rBase, st.fexp], [st.v0, st.vf]);
    // Action values that read an upstream state: every live pair with an outcome into the set.
    const qStamp = ++this.epoch;
    let m = 0;
    for (let h = 0; h < len; h++) {
      const t = upstream[h];
      for (let e = revStart[t]; e < revStart[t + 1]; e++) {
        const s = (revPair[e] / nA) | 0;
        if (mark[s] === qStamp) continue;
        mark[s] = qStamp;
        queue[m++] = s;
      }
    }
    this.actionValues(st, queue.subarray(0, m));
  }

  private solveOn(st: WalkState, states: Int32Array, rewards: Float64Array[], xs: Float64Array[]): void {
    this.evaluations++;
    evaluateOnStates(this.model, st.pi, states, rewards, xs, { gamma: this.gamma, accuracy: EVAL_ACCURACY }, this.rowScratch);
  }

  /** q0, qf of every action of `states` from the current V0, Vf. */
  private actionValues(st: WalkState, states: Int32Array): void {
    const { nActions: nA, saStart, next, prob } = this.model;
    const { v0, vf, q0, qf, fexp } = st;
    const g = this.gamma;
    const rBase = this.rBase;
    for (let i = 0; i < states.length; i++) {
      const s = states[i];
      for (let k = s * nA; k < (s + 1) * nA; k++) {
        let a0 = 0;
        let af = 0;
        for (let o = saStart[k]; o < saStart[k + 1]; o++) {
          a0 += prob[o] * v0[next[o]];
          af += prob[o] * vf[next[o]];
        }
        q0[k] = rBase[k] + g * a0;
        qf[k] = fexp[k] + g * af;
      }
    }
  }
}
