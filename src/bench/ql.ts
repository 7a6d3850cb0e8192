/**
 * Tabular Q-learning over a LearnerView, exactly the loop of shared/bench/PROBLEM.md section 5, so
 * the benchmark reproduces the peer programs' checksums bit for bit (Watkins 1989; Sutton & Barto
 * 2018, section 6.5, eq. 6.8).
 *
 * Per step: draw u1 = exploration.uint32(); explore iff u1 < ceil(epsilon * 2^32) (identical to
 * u1 / 2^32 < epsilon); when exploring a = exploration.int(nActions) (for 4 actions and Xorshift32
 * that is u2 >>> 30), else the greedy action, lowest index on ties. Then step, t += 1, target r on
 * termination, else r + gamma * max Q[s']; Q[s][a] += alpha * (target - Q[s][a]). On termination or
 * t == cap (truncation, which still bootstraps from s') the episode ends and the agent is reset.
 * The exploration stream is used for nothing else; an environment that needs draws (several
 * outcomes or several start states) takes them from `envRng`.
 *
 * policies/qlearning.ts (the learners' own module) should reproduce this loop; until it does, the
 * benchmark uses this one.
 */
import { sampleOutcome, sampleStart, type LearnerView } from "../model/learner-view.js";
import type { Rng } from "../rng/rng.js";

export interface TabularQOptions {
  steps: number;
  alpha: number;
  gamma: number;
  epsilon: number;
  /** Episode cap (truncation); default the view's horizon. */
  cap?: number;
}

export interface TabularQResult {
  /** nStates * nActions action values; terminal rows stay 0. */
  q: Float64Array;
  /** Completed episodes (terminated + truncated); the unfinished last one is not counted. */
  episodes: number;
  /** Episodes cut at the cap. */
  timeouts: number;
  /** Per state: number of episodes that terminated by entering it (non-zero only on terminal states). */
  endedIn: Float64Array;
}

const TWO32 = 4294967296;

/** The integer threshold t with (u < t) == (u / 2^32 < epsilon) for every uint32 u. */
export function exploreThreshold(epsilon: number): number {
  return Math.ceil(epsilon * TWO32);
}

/**
 * Train from Q = 0 (or the given table) for `opts.steps` environment steps. Hot loop over typed
 * arrays; no allocation per step.
 */
export function trainTabularQ(view: LearnerView, exploration: Rng, opts: TabularQOptions, envRng: Rng = exploration, q?: Float64Array): TabularQResult {
  const nA = view.nActions;
  const Q = q ?? new Float64Array(view.nStates * nA);
  const endedIn = new Float64Array(view.nStates);
  const cap = opts.cap ?? view.horizon;
  const stats = new Float64Array(2);
  const deterministic = view.saStart[view.nStates * nA] === view.nStates * nA && view.startStates.length === 1;
  if (deterministic && nA === 4) trainDeterministic4(view, exploration, opts, cap, Q, endedIn, stats);
  else trainGeneral(view, exploration, envRng, opts, cap, Q, endedIn, stats);
  return { q: Q, episodes: stats[0], timeouts: stats[1], endedIn };
}

function trainGeneral(view: LearnerView, rng: Rng, envRng: Rng, opts: TabularQOptions, cap: number, Q: Float64Array, endedIn: Float64Array, stats: Float64Array): void {
  const nA = view.nActions;
  const { next, reward, terminal } = view;
  const { alpha, gamma, steps } = opts;
  const threshold = exploreThreshold(opts.epsilon);
  let episodes = 0;
  let timeouts = 0;
  let s = sampleStart(view, envRng);
  let t = 0;
  for (let i = 0; i < steps; i++) {
    const b = s * nA;
    let a = 0;
    if (rng.uint32() < threshold) {
      a = rng.int(nA);
    } else {
      let m = Q[b];
      for (let c = 1; c < nA; c++) {
        if (Q[b + c] > m) {
          m = Q[b + c];
          a = c;
        }
      }
    }
    const o = sampleOutcome(view, s, a, envRng);
    const sp = next[o];
    const r = reward[o];
    const done = terminal[sp] === 1;
    let target: number;
    if (done) {
      target = r;
    } else {
      const nb = sp * nA;
      let m = Q[nb];
      for (let c = 1; c < nA; c++) if (Q[nb + c] > m) m = Q[nb + c];
      target = r + gamma * m;
    }
    const k = b + a;
    Q[k] = Q[k] + alpha * (target - Q[k]);
    t++;
    if (done) {
      episodes++;
      endedIn[sp]++;
      s = sampleStart(view, envRng);
      t = 0;
    } else if (t === cap) {
      episodes++;
      timeouts++;
      s = sampleStart(view, envRng);
      t = 0;
    } else {
      s = sp;
    }
  }
  stats[0] = episodes;
  stats[1] = timeouts;
}

/** Single-outcome pairs, one start state, four actions: the same loop with the argmaxes unrolled. */
function trainDeterministic4(view: LearnerView, rng: Rng, opts: TabularQOptions, cap: number, Q: Float64Array, endedIn: Float64Array, stats: Float64Array): void {
  const { next, reward, terminal } = view;
  const { alpha, gamma, steps } = opts;
  const threshold = exploreThreshold(opts.epsilon);
  const start = view.startStates[0];
  let episodes = 0;
  let timeouts = 0;
  let s = start;
  let t = 0;
  for (let i = 0; i < steps; i++) {
    const b = s << 2;
    let a: number;
    if (rng.uint32() < threshold) {
      a = rng.int(4);
    } else {
      a = 0;
      let m = Q[b];
      if (Q[b + 1] > m) {
        m = Q[b + 1];
        a = 1;
      }
      if (Q[b + 2] > m) {
        m = Q[b + 2];
        a = 2;
      }
      if (Q[b + 3] > m) a = 3;
    }
    const k = b + a;
    const sp = next[k];
    const r = reward[k];
    let target: number;
    if (terminal[sp] !== 0) {
      target = r;
    } else {
      const nb = sp << 2;
      let m = Q[nb];
      if (Q[nb + 1] > m) m = Q[nb + 1];
      if (Q[nb + 2] > m) m = Q[nb + 2];
      if (Q[nb + 3] > m) m = Q[nb + 3];
      target = r + gamma * m;
    }
    const qk = Q[k];
    Q[k] = qk + alpha * (target - qk);
    t++;
    if (terminal[sp] !== 0) {
      episodes++;
      endedIn[sp]++;
      s = start;
      t = 0;
    } else if (t === cap) {
      episodes++;
      timeouts++;
      s = start;
      t = 0;
    } else {
      s = sp;
    }
  }
  stats[0] = episodes;
  stats[1] = timeouts;
}
