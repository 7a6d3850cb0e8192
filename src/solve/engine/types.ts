/**
 * Options, results and shared pieces of the component-wise solving engine (src/solve/engine).
 */
import { defaultMaxIters } from "../sweeps.js";
import { FIXED_POINT_ACCURACY } from "../evaluation.js";

export interface EngineOptions {
  /** Discount; defaults to the model's. */
  gamma?: number;
  /**
   * Target max-norm distance of every value from the exact fixed point (default FIXED_POINT_ACCURACY,
   * 1e-9). Met with a proof for gamma < 1, and for gamma = 1 where an expected-exit-time certificate
   * exists (see evaluate.ts / value-iteration.ts); `errorBound` says what was proved.
   */
  accuracy?: number;
  /** Largest component solved by dense Gaussian elimination in policy evaluation (default 64; 0: never). */
  directMax?: number;
  /** Cap on the sweeps spent in one component (default `defaultMaxIters(gamma)` of dp.ts). */
  maxSweeps?: number;
}

export interface EngineStats {
  /** Components of the live (non-terminal) states' graph. */
  components: number;
  largestComponent: number;
  /** Components of one state, each solved in closed form. */
  singletons: number;
  /** Components solved by dense Gaussian elimination. */
  directSolves: number;
  /** State backups (one state's right-hand side computed once), sweeps, checks and certificates included. */
  backups: number;
}

export interface EngineResult {
  /** Value per state; 0 on terminal states. */
  values: Float64Array;
  /** False when some component hit `maxSweeps` or has no finite value (gamma = 1 without an exit). */
  converged: boolean;
  /**
   * Proven bound on max_s |values(s) - v(s)| (rounding aside), Infinity where no proof was found
   * (gamma = 1 when a policy that never leaves a component exists).
   */
  errorBound: number;
  stats: EngineStats;
}

export interface ResolvedOptions {
  gamma: number;
  accuracy: number;
  directMax: number;
  maxSweeps: number;
}

export function resolveOptions(modelGamma: number, opts: EngineOptions): ResolvedOptions {
  const gamma = opts.gamma ?? modelGamma;
  return {
    gamma,
    accuracy: opts.accuracy ?? FIXED_POINT_ACCURACY,
    directMax: opts.directMax ?? 64,
    maxSweeps: opts.maxSweeps ?? defaultMaxIters(gamma),
  };
}

export function emptyStats(components: number, largest: number): EngineStats {
  return { components, largestComponent: largest, singletons: 0, directSolves: 0, backups: 0 };
}

/**
 * The accuracy a component must reach so the whole result meets `accuracy`. An error e in the values
 * a component reads from its exits moves its own values by at most gamma * e (absorption into the
 * exits, discounted, has total weight <= gamma; Puterman 1994, section 6.2, from memory). So with
 * gamma < 1, asking each component for `accuracy - gamma * errIn` keeps every error <= accuracy (by
 * induction over the reverse topological order), and that target is never below (1 - gamma) *
 * accuracy. With gamma = 1 the errors add up along a path of components, so each of the `iterative`
 * components solved approximately gets an equal share.
 */
export function componentTarget(o: ResolvedOptions, errIn: number, iterative: number): number {
  return o.gamma < 1 ? o.accuracy - o.gamma * errIn : o.accuracy / Math.max(1, iterative);
}

/** Error of a component's values given its own (local) error and the largest error among its exits. */
export function componentError(o: ResolvedOptions, local: number, errIn: number): number {
  return local + (o.gamma < 1 ? o.gamma : 1) * errIn;
}

/**
 * The certified bound of a certificate check on expected exit times (gamma = 1): given tau with
 * max_i (1 + (P tau)_i - tau_i) <= `res`, (1 + delta) tau is a super-solution of tau = 1 + P tau when
 * res <= delta / (1 + delta), hence an upper bound on the expected number of steps before leaving the
 * component (P substochastic, (I - P)^{-1} >= 0; Puterman 1994, section 7.2 / Bertsekas & Tsitsiklis
 * 1996, stochastic shortest paths; from memory). Returns that upper bound's maximum, or Infinity.
 */
export const TAU_SLACK = 1e-6;
export function certifiedTauMax(res: number, tauMax: number): number {
  return res <= TAU_SLACK / (1 + TAU_SLACK) ? (1 + TAU_SLACK) * tauMax : Infinity;
}
