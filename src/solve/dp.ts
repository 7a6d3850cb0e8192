/**
 * Exact dynamic programming on a FiniteModel: iterative policy evaluation, value iteration, policy
 * iteration. Rewards are per outcome (designer reward of a variant, or `model.intent`). Pure; no I/O.
 *
 * Conventions: V = 0 on terminal states; sweeps are synchronous (two arrays, "Jacobi") unless
 * `inPlace` is set; a solver stops after the first sweep whose largest change is below `tol`, and
 * that sweep counts. Greedy ties go to the lowest action index.
 */
import type { FiniteModel } from "../model/types.js";

/** A stochastic policy: nStates * nActions probabilities, rows summing to 1. */
export type Policy = Float64Array;

export interface SolveOptions {
  gamma?: number;
  /** Stop after the first sweep with max |delta| < tol. Default 1e-10. */
  tol?: number;
  maxIters?: number;
  /** Gauss-Seidel (in-place) sweeps in state order instead of synchronous ones. */
  inPlace?: boolean;
  /**
   * Policy evaluation only: compute the fixed point v_pi to within this max-norm distance,
   * guaranteed, by the fastest method available (`evaluateFixedPoint`; ignores `tol` and `inPlace`).
   * With gamma >= 1 no such bound exists and it means synchronous sweeps with tol = accuracy.
   */
  accuracy?: number;
}

export interface Evaluation {
  values: Float64Array;
  iters: number;
  converged: boolean;
  /** Accuracy mode only: guaranteed bound on max |values - v_pi|. */
  errorBound?: number;
}

export interface Solution extends Evaluation {
  /** Greedy action per state (lowest index on ties); -1 on terminal states. */
  policy: Int32Array;
  /** Action values, nStates * nActions. */
  q: Float64Array;
}

/** Default `tol` of every solver here (also the parallel sweeps of parallel.ts). */
export const DEFAULT_TOL = 1e-10;

/** Default `maxIters` for a discount (also used by parallel.ts, so both stop alike). */
export function defaultMaxIters(gamma: number): number {
  return gamma < 1 ? Math.max(10_000, Math.ceil(Math.log(1e-12) / Math.log(gamma)) * 4) : 1_000_000;
}

/** Expected immediate reward per (s, a) and the outcome structure, precomputed once per solve. */
export function expectedReward(model: FiniteModel, reward: Float64Array): Float64Array {
  const nSA = model.nStates * model.nActions;
  const r = new Float64Array(nSA);
  const { saStart, prob } = model;
  for (let k = 0; k < nSA; k++) {
    const lo = saStart[k];
    const hi = saStart[k + 1];
    if (hi - lo === 1) {
      r[k] = reward[lo];
      continue;
    }
    let acc = 0;
    for (let o = lo; o < hi; o++) acc += prob[o] * reward[o];
    r[k] = acc;
  }
  return r;
}

/** Q(s, a) = r(s, a) + gamma * sum_o p_o V(next_o). Single-outcome pairs skip the multiply by 1. */
function backup(model: FiniteModel, r: Float64Array, gamma: number, V: Float64Array, k: number): number {
  const lo = model.saStart[k];
  const hi = model.saStart[k + 1];
  if (hi - lo === 1) return r[k] + gamma * V[model.next[lo]];
  let ev = 0;
  for (let o = lo; o < hi; o++) ev += model.prob[o] * V[model.next[o]];
  return r[k] + gamma * ev;
}

/**
 * The Markov chain of a stochastic policy over the live (non-terminal) states, built once per
 * evaluation in one O(outcomes) pass: row i is live state `states[i]` (increasing state order), its
 * successors are row indices (terminal successors dropped: V = 0 there), duplicates merged, the
 * self-loop weight kept apart in `self`. Weights are pi(a|s) * p(s'|s, a) summed over actions and
 * outcomes; zero-probability actions and outcomes are left out.
 */
export interface PolicyChain {
  readonly nStates: number;
  /** Live states in row order. */
  readonly states: Int32Array;
  /** CSR row ranges into `col` / `weight`, length states.length + 1. */
  readonly rowStart: Int32Array;
  /** Successor row (never the row itself, never a terminal state). */
  readonly col: Int32Array;
  readonly weight: Float64Array;
  /** Probability of staying in the same state in one step. */
  readonly self: Float64Array;
}

export function policyChain(model: FiniteModel, policy: Policy): PolicyChain {
  const nS = model.nStates;
  const nA = model.nActions;
  const { saStart, next, prob, terminal } = model;
  const rowOf = new Int32Array(nS).fill(-1);
  let n = 0;
  for (let s = 0; s < nS; s++) if (!terminal[s]) rowOf[s] = n++;
  const states = new Int32Array(n);
  for (let s = 0; s < nS; s++) if (rowOf[s] >= 0) states[rowOf[s]] = s;
  // Upper bound on the entries: the outcomes of the actions the policy uses.
  let cap = 0;
  for (let i = 0; i < n; i++) {
    const s = states[i];
    for (let a = 0; a < nA; a++) if (policy[s * nA + a] !== 0) cap += saStart[s * nA + a + 1] - saStart[s * nA + a];
  }
  const rowStart = new Int32Array(n + 1);
  let col = new Int32Array(cap);
  let weight = new Float64Array(cap);
  const self = new Float64Array(n);
  const slot = new Int32Array(n).fill(-1);
  let e = 0;
  for (let i = 0; i < n; i++) {
    const s = states[i];
    rowStart[i] = e;
    let w0 = 0;
    for (let a = 0; a < nA; a++) {
      const pa = policy[s * nA + a];
      if (pa === 0) continue;
      const hi = saStart[s * nA + a + 1];
      for (let o = saStart[s * nA + a]; o < hi; o++) {
        const j = rowOf[next[o]];
        if (j < 0 || prob[o] === 0) continue;
        const w = pa * prob[o];
        if (j === i) w0 += w;
        else if (slot[j] >= 0) weight[slot[j]] += w;
        else {
          slot[j] = e;
          col[e] = j;
          weight[e++] = w;
        }
      }
    }
    self[i] = w0;
    for (let k = rowStart[i]; k < e; k++) slot[col[k]] = -1;
  }
  rowStart[n] = e;
  if (e < cap) {
    col = col.slice(0, e);
    weight = weight.slice(0, e);
  }
  return { nStates: nS, states, rowStart, col, weight, self };
}

/** Expected one-step reward of the policy per chain row: r_pi(s) = sum_a pi(a|s) r(s, a). */
export function chainReward(model: FiniteModel, chain: PolicyChain, policy: Policy, reward: Float64Array): Float64Array {
  const nA = model.nActions;
  const r = expectedReward(model, reward);
  const out = new Float64Array(chain.states.length);
  for (let i = 0; i < out.length; i++) {
    const k0 = chain.states[i] * nA;
    let acc = 0;
    for (let a = 0; a < nA; a++) {
      const pa = policy[k0 + a];
      if (pa !== 0) acc += pa * r[k0 + a];
    }
    out[i] = acc;
  }
  return out;
}

/** The accuracy callers use for reference values (uniform-random baselines): 1e-9 absolute on V. */
export const FIXED_POINT_ACCURACY = 1e-9;

/**
 * Iterative policy evaluation of a stochastic policy (Sutton & Barto 2018, section 4.1).
 *
 * Default: synchronous sweeps v_{k+1} = r_pi + gamma P_pi v_k from v_0 = 0 (`inPlace`: Gauss-Seidel
 * in state order), stopping after the first sweep whose largest change is below `tol` (that sweep
 * counts), so `iters` and every v_k are the textbook's. The sweeps run over `policyChain` (the
 * policy-averaged transitions, built once), not over actions and outcomes.
 *
 * With `accuracy` set (and gamma < 1), only the fixed point matters: see `evaluateFixedPoint`. The
 * result then carries `errorBound`, a guaranteed bound on max_s |values(s) - v_pi(s)| (<= accuracy
 * when converged), and `iters` counts sweep-equivalents, not textbook sweeps.
 */
export function evaluatePolicy(model: FiniteModel, reward: Float64Array, policy: Policy, opts: SolveOptions = {}): Evaluation {
  return evaluatePolicyMany(model, [reward], policy, opts)[0];
}

/** `evaluatePolicy` for several rewards under one policy, sharing the chain. */
export function evaluatePolicyMany(model: FiniteModel, rewards: Float64Array[], policy: Policy, opts: SolveOptions = {}): Evaluation[] {
  const gamma = opts.gamma ?? model.gamma;
  const chain = policyChain(model, policy);
  return rewards.map((reward) => {
    const r = chainReward(model, chain, policy, reward);
    const ev =
      opts.accuracy !== undefined && gamma < 1
        ? evaluateFixedPoint(chain, r, gamma, opts.accuracy, opts.maxIters ?? defaultMaxIters(gamma))
        : chainSweeps(chain, r, gamma, opts.accuracy ?? opts.tol ?? DEFAULT_TOL, opts.maxIters ?? defaultMaxIters(gamma), opts.inPlace === true);
    return { ...ev, values: scatter(chain, ev.values) };
  });
}

/** Row-space values to a state-indexed vector (0 on terminal states). */
function scatter(chain: PolicyChain, x: Float64Array): Float64Array {
  const V = new Float64Array(chain.nStates);
  const { states } = chain;
  for (let i = 0; i < states.length; i++) V[states[i]] = x[i];
  return V;
}

/**
 * The iteration every sweep-based solver shares: from V = 0, call `sweep(V, W)` (it writes W and returns
 * max |W - V|; W is V itself when `inPlace`), swap the buffers, and stop after the first sweep whose
 * change is below `tol` (that sweep counts) or after `maxIters` sweeps.
 */
export function iterateSweeps(n: number, tol: number, maxIters: number, inPlace: boolean, sweep: (V: Float64Array, W: Float64Array) => number): Evaluation {
  let V = new Float64Array(n);
  let W = inPlace ? V : new Float64Array(n);
  let iters = 0;
  let converged = false;
  while (iters < maxIters) {
    const delta = sweep(V, W);
    iters++;
    if (!inPlace) {
      const t = V;
      V = W;
      W = t;
    }
    if (delta < tol) {
      converged = true;
      break;
    }
  }
  return { values: V, iters, converged };
}

/** Textbook sweeps over the chain (row space); see `evaluatePolicy`. */
function chainSweeps(chain: PolicyChain, r: Float64Array, gamma: number, tol: number, maxIters: number, inPlace: boolean): Evaluation {
  return iterateSweeps(r.length, tol, maxIters, inPlace, (x, y) => bellmanSweep(chain, r, gamma, x, y));
}

/** y = r + gamma P x (y may be x: Gauss-Seidel); returns max |y - x| (per row, before the write). */
function bellmanSweep(chain: PolicyChain, r: Float64Array, gamma: number, x: Float64Array, y: Float64Array): number {
  const { rowStart, col, weight, self } = chain;
  const n = r.length;
  let delta = 0;
  let k = rowStart[0];
  for (let i = 0; i < n; i++) {
    const end = rowStart[i + 1];
    const xi = x[i];
    let acc = self[i] * xi;
    for (; k < end; k++) acc += weight[k] * x[col[k]];
    const v = r[i] + gamma * acc;
    const d = Math.abs(v - xi);
    if (d > delta) delta = d;
    y[i] = v;
  }
  return delta;
}

/**
 * The fixed point v_pi = r_pi + gamma P_pi v_pi to a guaranteed accuracy (gamma < 1), for callers
 * that need v_pi itself and not the textbook iterates.
 *
 * Method: successive over-relaxation on (I - gamma P_pi) v = r_pi in row order, each row solved for
 * its own state (the self-loop moved to the left-hand side). It starts as Gauss-Seidel (omega = 1);
 * if after two windows of six sweeps the change still shrinks slower than 0.5 per sweep, omega is
 * set to omega0 = 2 / (1 + sqrt(1 - gamma^2)), Young's optimum for a consistently ordered system
 * with Jacobi spectral radius gamma (Young 1971; Hageman & Young 1981, ch. 9; from memory). gamma
 * bounds that radius here, so omega0 errs on the high side, where SOR loses least. If SOR then does
 * worse than Gauss-Seidel did, two windows running, it drops back to omega = 1 for good, restarting
 * from the iterate it switched at if it was diverging (SOR can diverge on non-symmetric chains such
 * as the assay-carousel ring; the theory covers symmetric ones like grid random walks). Measured on the uniform policies of
 * the lava field and the built-in scenarios: 4-9x fewer sweeps than Gauss-Seidel.
 *
 * Stopping is not heuristic: when the iterates look converged, one synchronous Bellman sweep
 * y = T x is taken and, since T is a gamma-contraction in the max norm,
 *   max |y - v_pi| <= gamma / (1 - gamma) * max |y - x|,
 * so y is returned with that bound once it is <= accuracy (up to floating-point rounding of the
 * sweep itself). `iters` counts sweeps including these checks.
 */
export function evaluateFixedPoint(chain: PolicyChain, r: Float64Array, gamma: number, accuracy: number, maxIters: number): Evaluation & { errorBound: number } {
  const n = r.length;
  const { rowStart, col, weight, self } = chain;
  const diagInv = new Float64Array(n);
  for (let i = 0; i < n; i++) diagInv[i] = 1 / (1 - gamma * self[i]);
  const x = new Float64Array(n);
  const y = new Float64Array(n);
  const factor = gamma / (1 - gamma);
  // Check when the SOR change suggests the delta-based bound would hold; tightened if a check fails.
  let checkAt = accuracy / factor;
  // The optimal omega of a consistently ordered system whose Jacobi radius is gamma, the largest
  // it can be here (row sums of gamma P_pi are at most gamma): an upper end of the optimum, and
  // SOR loses far less above its optimum than below it.
  const omega0 = 2 / (1 + Math.sqrt(1 - gamma * gamma));
  let omega = 1;
  let rhoGs = NaN;
  let gsWindows = 0;
  let windowStart = 0;
  let windowLen = -1;
  const WINDOW = 6;
  let settle = 0;
  let worse = 0;
  let fellBack = false;
  let saved: Float64Array | null = null;
  let switchDelta = 0;
  let iters = 0;
  let bound = Infinity;
  while (iters < maxIters) {
    // One SOR sweep.
    let delta = 0;
    let k = rowStart[0];
    for (let i = 0; i < n; i++) {
      const end = rowStart[i + 1];
      let acc = 0;
      for (; k < end; k++) acc += weight[k] * x[col[k]];
      const xi = x[i];
      const d = omega * ((r[i] + gamma * acc) * diagInv[i] - xi);
      x[i] = xi + d;
      const ad = Math.abs(d);
      if (ad > delta) delta = ad;
    }
    iters++;
    if (omega !== 1 && !(delta < 1e6 * switchDelta)) {
      // SOR blowing up (it can diverge on non-symmetric chains): restart from where it began, as Gauss-Seidel.
      x.set(saved as Float64Array);
      omega = 1;
      fellBack = true;
      continue;
    }
    if (delta <= checkAt) {
      const res = bellmanSweep(chain, r, gamma, x, y);
      iters++;
      bound = factor * res;
      if (bound <= accuracy) return { values: y, iters, converged: true, errorBound: bound };
      checkAt = Math.min(checkAt, delta) * Math.max(1e-3, (0.5 * accuracy) / bound);
      continue;
    }
    // Convergence-rate bookkeeping over windows of sweeps: geometric mean ratio of successive changes.
    if (++windowLen < WINDOW) continue;
    const rate = windowStart > 0 ? Math.pow(delta / windowStart, 1 / WINDOW) : NaN;
    windowStart = delta;
    windowLen = 0;
    if (fellBack || !(rate > 0)) continue;
    if (settle > 0) {
      // The first windows after a change of omega carry its transient (the change itself scales by omega).
      settle--;
      continue;
    }
    if (omega === 1) {
      // After two measured Gauss-Seidel windows: a slow chain (rate > 0.5) switches to omega0.
      if (++gsWindows === 2) {
        if (rate > 0.5) {
          rhoGs = rate;
          omega = omega0;
          settle = 2;
          saved = Float64Array.from(x);
          switchDelta = delta;
        } else fellBack = true;
      }
    } else if (rate >= rhoGs) {
      // Worse than plain Gauss-Seidel twice in a row: not a system the estimate fits; go back to it.
      if (++worse >= 2) {
        if (rate >= 1) x.set(saved as Float64Array);
        omega = 1;
        fellBack = true;
      }
    } else worse = 0;
  }
  const res = bellmanSweep(chain, r, gamma, x, y);
  return { values: y, iters: iters + 1, converged: false, errorBound: factor * res };
}

/**
 * Tables for value-iteration sweeps, built once per (model, reward) in one O(outcomes) pass: the
 * expected reward per (s, a), the non-terminal states in increasing order, and for deterministic
 * models (one outcome per pair) the successor and reward of each live (state, action) packed
 * contiguously, so a sweep streams through them without touching terminal flags or outcome ranges.
 */
export interface SweepPlan {
  readonly expected: Float64Array;
  readonly live: Int32Array;
  /** Deterministic models: next state of (live[i], a) at i * nActions + a; otherwise null. */
  readonly liveNext: Int32Array | null;
  /** Deterministic models: reward of (live[i], a) at i * nActions + a; otherwise null. */
  readonly liveReward: Float64Array | null;
}

export function sweepPlan(model: FiniteModel, reward: Float64Array): SweepPlan {
  const nS = model.nStates;
  const nA = model.nActions;
  const expected = expectedReward(model, reward);
  let nLive = 0;
  for (let s = 0; s < nS; s++) if (!model.terminal[s]) nLive++;
  const live = new Int32Array(nLive);
  for (let s = 0, i = 0; s < nS; s++) if (!model.terminal[s]) live[i++] = s;
  if (model.saStart[nS * nA] !== nS * nA) return { expected, live, liveNext: null, liveReward: null };
  // One outcome per pair: outcome index k = s * nA + a.
  const liveNext = new Int32Array(nLive * nA);
  const liveReward = new Float64Array(nLive * nA);
  for (let i = 0; i < nLive; i++) {
    const k0 = live[i] * nA;
    for (let a = 0; a < nA; a++) {
      liveNext[i * nA + a] = model.next[k0 + a];
      liveReward[i * nA + a] = expected[k0 + a];
    }
  }
  return { expected, live, liveNext, liveReward };
}

/**
 * The sweeps of value iteration alone (no action values, no greedy policy): what the benchmark times.
 * Pass a `sweepPlan(model, reward)` built beforehand to keep that one-off pass out of a timed region.
 */
export function valueSweeps(model: FiniteModel, reward: Float64Array, opts: SolveOptions = {}, plan: SweepPlan = sweepPlan(model, reward)): Evaluation {
  const gamma = opts.gamma ?? model.gamma;
  const tol = opts.tol ?? DEFAULT_TOL;
  const maxIters = opts.maxIters ?? defaultMaxIters(gamma);
  const tables = sweepTables(model, plan);
  const sweep = rangeSweepFor(tables);
  const n = plan.live.length;
  // Terminal entries are never written, so they stay 0 in both buffers.
  return iterateSweeps(model.nStates, tol, maxIters, opts.inPlace === true, (V, W) => sweep(tables, gamma, V, W, 0, n));
}

/**
 * The arrays one sweep reads: the `sweepPlan` tables plus the model's outcome arrays. Single-threaded
 * sweeps pass the model's own arrays; the parallel solver (parallel.ts) passes copies in shared memory.
 * `liveNext` / `liveReward` are set for deterministic models, else the outcome arrays are used.
 */
export interface SweepTables {
  nActions: number;
  live: Int32Array;
  liveNext: Int32Array | null;
  liveReward: Float64Array | null;
  expected: Float64Array | null;
  saStart: Int32Array | null;
  next: Int32Array | null;
  prob: Float64Array | null;
}

export function sweepTables(model: FiniteModel, plan: SweepPlan): SweepTables {
  return {
    nActions: model.nActions,
    live: plan.live,
    liveNext: plan.liveNext,
    liveReward: plan.liveReward,
    expected: plan.expected,
    saStart: model.saStart,
    next: model.next,
    prob: model.prob,
  };
}

/**
 * One Bellman-optimality sweep over live indices lo .. hi - 1, reading V and writing W (may be V
 * itself); returns the largest |W - V|. Each kind is its own monomorphic function so the JIT compiles a
 * tight loop; all compute exactly r(s, a) + gamma * (sum_o p_o V(next_o)) in the same order, so any
 * split of the range (parallel.ts) gives bit-identical values.
 */
export type RangeSweep = (t: SweepTables, gamma: number, V: Float64Array, W: Float64Array, lo: number, hi: number) => number;

function backupTables(t: SweepTables, gamma: number, V: Float64Array, k: number): number {
  const saStart = t.saStart as Int32Array;
  const next = t.next as Int32Array;
  const prob = t.prob as Float64Array;
  const r = t.expected as Float64Array;
  const lo = saStart[k];
  const hi = saStart[k + 1];
  if (hi - lo === 1) return r[k] + gamma * V[next[lo]];
  let ev = 0;
  for (let o = lo; o < hi; o++) ev += prob[o] * V[next[o]];
  return r[k] + gamma * ev;
}

export const sweepRangeGeneral: RangeSweep = (t, gamma, V, W, lo, hi) => {
  const nA = t.nActions;
  const live = t.live;
  let delta = 0;
  for (let i = lo; i < hi; i++) {
    const s = live[i];
    const k0 = s * nA;
    let best = backupTables(t, gamma, V, k0);
    for (let a = 1; a < nA; a++) {
      const q = backupTables(t, gamma, V, k0 + a);
      if (q > best) best = q;
    }
    const d = Math.abs(best - V[s]);
    if (d > delta) delta = d;
    W[s] = best;
  }
  return delta;
};

export const sweepRangeDeterministic: RangeSweep = (t, gamma, V, W, lo, hi) => {
  const nA = t.nActions;
  const live = t.live;
  const next = t.liveNext as Int32Array;
  const r = t.liveReward as Float64Array;
  let delta = 0;
  for (let i = lo; i < hi; i++) {
    const s = live[i];
    const k0 = i * nA;
    let best = r[k0] + gamma * V[next[k0]];
    for (let a = 1; a < nA; a++) {
      const q = r[k0 + a] + gamma * V[next[k0 + a]];
      if (q > best) best = q;
    }
    const d = Math.abs(best - V[s]);
    if (d > delta) delta = d;
    W[s] = best;
  }
  return delta;
};

/** Four actions (grid worlds), unrolled: about twice as fast as the loop under V8. */
export const sweepRangeDeterministic4: RangeSweep = (t, gamma, V, W, lo, hi) => {
  const live = t.live;
  const next = t.liveNext as Int32Array;
  const r = t.liveReward as Float64Array;
  let delta = 0;
  for (let i = lo; i < hi; i++) {
    const s = live[i];
    const k = i << 2;
    let best = r[k] + gamma * V[next[k]];
    const q1 = r[k + 1] + gamma * V[next[k + 1]];
    const q2 = r[k + 2] + gamma * V[next[k + 2]];
    const q3 = r[k + 3] + gamma * V[next[k + 3]];
    if (q1 > best) best = q1;
    if (q2 > best) best = q2;
    if (q3 > best) best = q3;
    const d = Math.abs(best - V[s]);
    if (d > delta) delta = d;
    W[s] = best;
  }
  return delta;
};

/** The sweep kind for a set of tables. */
export function rangeSweepFor(t: SweepTables): RangeSweep {
  return t.liveNext ? (t.nActions === 4 ? sweepRangeDeterministic4 : sweepRangeDeterministic) : sweepRangeGeneral;
}

/** Value iteration (Sutton & Barto 2018, section 4.4), synchronous sweeps by default. */
export function valueIteration(model: FiniteModel, reward: Float64Array, opts: SolveOptions = {}): Solution {
  const gamma = opts.gamma ?? model.gamma;
  const ev = valueSweeps(model, reward, opts);
  const q = actionValues(model, reward, ev.values, gamma);
  return { ...ev, policy: greedyActions(model, q), q };
}

/** Q = r + gamma * P V for every (s, a); zeros on terminal states. */
export function actionValues(model: FiniteModel, reward: Float64Array, V: Float64Array, gamma = model.gamma): Float64Array {
  const nA = model.nActions;
  const r = expectedReward(model, reward);
  const q = new Float64Array(model.nStates * nA);
  for (let s = 0; s < model.nStates; s++) {
    if (model.terminal[s]) continue;
    for (let a = 0; a < nA; a++) q[s * nA + a] = backup(model, r, gamma, V, s * nA + a);
  }
  return q;
}

/** Greedy action per state, lowest index on ties (exact comparison); -1 on terminal states. */
export function greedyActions(model: FiniteModel, q: Float64Array, tieTol = 0): Int32Array {
  const nA = model.nActions;
  const pi = new Int32Array(model.nStates);
  for (let s = 0; s < model.nStates; s++) {
    if (model.terminal[s]) {
      pi[s] = -1;
      continue;
    }
    let best = 0;
    for (let a = 1; a < nA; a++) if (q[s * nA + a] > q[s * nA + best] + tieTol) best = a;
    pi[s] = best;
  }
  return pi;
}

/** Policy iteration (Sutton & Barto 2018, section 4.3) from the all-zeros policy. */
export function policyIteration(model: FiniteModel, reward: Float64Array, opts: SolveOptions & { maxPolicyIters?: number } = {}): Solution & { policyIters: number } {
  const gamma = opts.gamma ?? model.gamma;
  let actions = new Int32Array(model.nStates);
  for (let s = 0; s < model.nStates; s++) actions[s] = model.terminal[s] ? -1 : 0;
  let policyIters = 0;
  let totalIters = 0;
  const maxPolicyIters = opts.maxPolicyIters ?? 1000;
  for (;;) {
    const ev = evaluatePolicy(model, reward, deterministicPolicy(model, actions), { ...opts, gamma, tol: opts.tol ?? 1e-12 });
    totalIters += ev.iters;
    const q = actionValues(model, reward, ev.values, gamma);
    // Improve, keeping the current action unless another is better by more than a rounding margin.
    const improved = new Int32Array(model.nStates);
    let stable = true;
    const nA = model.nActions;
    for (let s = 0; s < model.nStates; s++) {
      if (model.terminal[s]) {
        improved[s] = -1;
        continue;
      }
      let best = actions[s];
      for (let a = 0; a < nA; a++) if (q[s * nA + a] > q[s * nA + best] + 1e-9 * (1 + Math.abs(q[s * nA + best]))) best = a;
      improved[s] = best;
      if (best !== actions[s]) stable = false;
    }
    policyIters++;
    actions = improved;
    if (stable || policyIters >= maxPolicyIters) {
      return { values: ev.values, iters: totalIters, converged: stable, policy: actions, q, policyIters };
    }
  }
}

/** One-hot policy from an action per state (terminal rows: uniform, never used). */
export function deterministicPolicy(model: FiniteModel, actions: Int32Array): Policy {
  const nA = model.nActions;
  const p = new Float64Array(model.nStates * nA);
  for (let s = 0; s < model.nStates; s++) {
    const a = actions[s];
    if (a >= 0) p[s * nA + a] = 1;
    else for (let b = 0; b < nA; b++) p[s * nA + b] = 1 / nA;
  }
  return p;
}

/** The uniform-random policy. */
export function uniformPolicy(model: FiniteModel): Policy {
  return new Float64Array(model.nStates * model.nActions).fill(1 / model.nActions);
}

/** Expected return from the start distribution: sum_s start(s) V(s). */
export function startValue(model: FiniteModel, values: Float64Array): number {
  let acc = 0;
  for (let s = 0; s < model.nStates; s++) if (model.start[s] > 0) acc += model.start[s] * values[s];
  return acc;
}
