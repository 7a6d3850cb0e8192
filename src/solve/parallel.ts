/**
 * Opt-in multi-threaded value iteration: the synchronous (Jacobi) sweeps of `valueSweeps` split
 * over contiguous ranges of the live states, one range per thread (the calling thread takes the
 * first, worker_threads the rest). Each backup reads only the previous sweep's V, so every value is
 * computed by the same floating-point expression in the same order as single-threaded, and the
 * results (values, iters, converged) are bit-identical; the sweep's delta is the max of the
 * per-range maxima, which is the same number.
 *
 * Memory: V lives in two SharedArrayBuffers swapped per sweep; the `sweepPlan` tables (and, for
 * stochastic models, the outcome arrays) are copied once into shared memory. Synchronization is one
 * sense-reversing barrier per sweep (Atomics on an Int32Array; a short spin, then Atomics.wait). After
 * the barrier every thread reads all per-range deltas (double-buffered by sweep parity) and takes the
 * same stop decision, so no second sync point is needed.
 *
 * Threads are started per solve (`prepareParallelSweeps`) and end after the sweeps; each runs
 * parallel-worker.ts, started by src/util/worker.ts (the built .js, or through tsx from source). The
 * library default stays single-threaded (`valueIteration`).
 */
import type { Worker } from "node:worker_threads";
import { InputError } from "../errors.js";
import { startWorker } from "../util/worker.js";
import type { FiniteModel } from "../model/types.js";
import { actionValues, DEFAULT_TOL, defaultMaxIters, greedyActions, type Evaluation, type Solution, type SolveOptions } from "./sweeps.js";
import { rangeSweepFor, sweepPlan, type SweepPlan, type SweepTables } from "./value-iteration.js";

export interface ParallelOptions extends SolveOptions {
  /** Threads taking part in each sweep, the calling one included. Default 2. */
  threads?: number;
}

/** The arrays a sweep reads, in shared memory (see `SweepTables` in value-iteration.ts). */
export type SharedTables = SweepTables;

/** Everything a worker needs (structured-cloned; the SharedArrayBuffers inside are shared, not copied). */
export interface SweepJob {
  tables: SharedTables;
  gamma: number;
  tol: number;
  maxIters: number;
  threads: number;
  /** This thread's index (0 = the calling thread). */
  index: number;
  /** Range of live-state indices per thread: thread t sweeps bounds[t] .. bounds[t + 1] - 1. */
  bounds: Int32Array;
  /** [barrier count, barrier generation, abort flag]. */
  ctrl: Int32Array;
  /** Per-thread sweep maxima, 2 * threads entries: parity * threads + index. */
  deltas: Float64Array;
  V0: Float64Array;
  V1: Float64Array;
}

const COUNT = 0;
const GEN = 1;
const ABORT = 2;
const SPIN = 20_000;

/** Raised in every thread when one of them failed; the solve is abandoned. */
export class SweepAborted extends Error {
  constructor() {
    super("a parallel sweep thread failed");
  }
}

/** Sense-reversing barrier over `n` threads: returns once all have arrived. */
export function barrier(ctrl: Int32Array, n: number): void {
  const gen = Atomics.load(ctrl, GEN);
  if (Atomics.add(ctrl, COUNT, 1) === n - 1) {
    Atomics.store(ctrl, COUNT, 0);
    Atomics.add(ctrl, GEN, 1);
    Atomics.notify(ctrl, GEN);
  } else {
    let spins = 0;
    while (Atomics.load(ctrl, GEN) === gen) {
      if (++spins > SPIN) {
        if (Atomics.load(ctrl, ABORT) !== 0) break;
        Atomics.wait(ctrl, GEN, gen, 50);
      }
    }
  }
  if (Atomics.load(ctrl, ABORT) !== 0) throw new SweepAborted();
}

/** Mark the solve failed and wake every waiting thread. */
export function abortSweeps(ctrl: Int32Array): void {
  Atomics.store(ctrl, ABORT, 1);
  Atomics.add(ctrl, GEN, 1);
  Atomics.notify(ctrl, GEN);
}

/**
 * The sweep loop of one thread (the calling thread and every worker run it). All threads take the
 * same stop decision from the same deltas, so they leave after the same sweep. Returns the sweep count.
 */
export function sweepLoop(job: SweepJob): { iters: number; converged: boolean } {
  const { tables, gamma, tol, maxIters, threads, index, bounds, ctrl, deltas, V0, V1 } = job;
  const sweep = rangeSweepFor(tables);
  const lo = bounds[index];
  const hi = bounds[index + 1];
  // Start gate: the timed region of a caller begins when every thread is ready.
  barrier(ctrl, threads);
  let iters = 0;
  let converged = false;
  while (iters < maxIters) {
    const odd = iters & 1;
    const d = odd ? sweep(tables, gamma, V1, V0, lo, hi) : sweep(tables, gamma, V0, V1, lo, hi);
    const base = odd * threads;
    deltas[base + index] = d;
    barrier(ctrl, threads);
    iters++;
    // Max of the per-range maxima, as in the single-thread sweep (`d > delta` from 0).
    let delta = 0;
    for (let t = 0; t < threads; t++) {
      const x = deltas[base + t];
      if (x > delta) delta = x;
    }
    if (delta < tol) {
      converged = true;
      break;
    }
  }
  return { iters, converged };
}

function sharedCopy<T extends Int32Array | Float64Array>(src: T): T {
  const C = src.constructor as { new (b: SharedArrayBuffer): T; BYTES_PER_ELEMENT: number };
  const dst = new C(new SharedArrayBuffer(Math.max(1, src.length) * C.BYTES_PER_ELEMENT));
  (dst as Int32Array | Float64Array).set(src);
  return src.length === 0 ? (dst.subarray(0, 0) as T) : dst;
}

function sharedTables(model: FiniteModel, plan: SweepPlan): SharedTables {
  const det = plan.liveNext !== null && plan.liveReward !== null;
  return {
    nActions: model.nActions,
    live: sharedCopy(plan.live),
    liveNext: det ? sharedCopy(plan.liveNext as Int32Array) : null,
    liveReward: det ? sharedCopy(plan.liveReward as Float64Array) : null,
    expected: det ? null : sharedCopy(plan.expected),
    saStart: det ? null : sharedCopy(model.saStart),
    next: det ? null : sharedCopy(model.next),
    prob: det ? null : sharedCopy(model.prob),
  };
}

/** Split the live states into `threads` contiguous ranges of about equal work (outcomes swept). */
export function partition(model: FiniteModel, live: Int32Array, threads: number): Int32Array {
  const nA = model.nActions;
  const { saStart } = model;
  const work = (i: number) => saStart[live[i] * nA + nA] - saStart[live[i] * nA];
  let total = 0;
  for (let i = 0; i < live.length; i++) total += work(i);
  const bounds = new Int32Array(threads + 1);
  let acc = 0;
  let t = 1;
  for (let i = 0; i < live.length && t < threads; i++) {
    acc += work(i);
    while (t < threads && acc * threads >= total * t) bounds[t++] = i + 1;
  }
  for (; t <= threads; t++) bounds[t] = live.length;
  return bounds;
}

function spawnSweeper(job: SweepJob): Worker {
  return startWorker(import.meta.url, "parallel-worker", { job });
}

/** Threads started and waiting at the start gate; `run` does the sweeps (once), `close` waits for the threads to end. */
export interface ParallelSweeps {
  readonly threads: number;
  /** The sweeps, synchronous on the calling thread: same result as `valueSweeps`. Once only. */
  run(): Evaluation;
  /** Stop the threads (if `run` was not called) and wait until they have exited. */
  close(): Promise<void>;
}

/**
 * Copy the tables into shared memory, start `threads - 1` workers and wait until each is ready.
 * The benchmark times `run()` alone, like the single-thread `valueSweeps` after `sweepPlan`.
 */
export async function prepareParallelSweeps(model: FiniteModel, reward: Float64Array, opts: ParallelOptions = {}, plan: SweepPlan = sweepPlan(model, reward)): Promise<ParallelSweeps> {
  const threads = opts.threads ?? 2;
  if (!Number.isInteger(threads) || threads < 1) throw new InputError("config.threads", `threads must be an integer >= 1, got ${threads}`, "threads");
  if (opts.inPlace) throw new InputError("config.parallelInPlace", "parallel value iteration runs synchronous sweeps only; drop inPlace or use valueIteration", "inPlace");
  const gamma = opts.gamma ?? model.gamma;
  const tol = opts.tol ?? DEFAULT_TOL;
  const maxIters = opts.maxIters ?? defaultMaxIters(gamma);
  const nS = model.nStates;
  const f64 = (n: number) => new Float64Array(new SharedArrayBuffer(Math.max(1, n) * 8)).subarray(0, n);
  const base = {
    tables: sharedTables(model, plan),
    gamma,
    tol,
    maxIters,
    threads,
    bounds: partition(model, plan.live, threads),
    ctrl: new Int32Array(new SharedArrayBuffer(16)),
    deltas: f64(2 * threads),
    V0: f64(nS),
    V1: f64(nS),
  };
  const workers: Worker[] = [];
  const exited: Promise<void>[] = [];
  let failure: unknown = null;
  try {
    const ready: Promise<void>[] = [];
    for (let t = 1; t < threads; t++) {
      const w = spawnSweeper({ ...base, index: t });
      workers.push(w);
      exited.push(new Promise((res) => w.once("exit", () => res())));
      ready.push(
        new Promise((res, rej) => {
          w.once("message", (m: { ready?: boolean }) => (m.ready ? res() : rej(new Error("unexpected message from a sweep thread"))));
          w.once("error", (e) => {
            failure = e;
            rej(e);
          });
          w.once("exit", (code) => rej(new Error(`sweep thread exited early with code ${code}`)));
        }),
      );
    }
    await Promise.all(ready);
  } catch (err) {
    abortSweeps(base.ctrl);
    await Promise.all(workers.map((w) => w.terminate()));
    throw err;
  }
  let used = false;
  return {
    threads,
    run(): Evaluation {
      if (used) throw new Error("ParallelSweeps.run may be called once");
      used = true;
      try {
        const { iters, converged } = sweepLoop({ ...base, index: 0 });
        // Sweep j writes V1 when j is even: after `iters` sweeps the latest values are in V1 iff iters is odd.
        const last = iters & 1 ? base.V1 : base.V0;
        return { values: Float64Array.from(last), iters, converged };
      } catch (err) {
        abortSweeps(base.ctrl);
        throw err instanceof SweepAborted && failure ? failure : err;
      }
    },
    async close(): Promise<void> {
      if (!used) {
        used = true;
        abortSweeps(base.ctrl);
      }
      await Promise.all(exited);
    },
  };
}

/**
 * `valueIteration` with each sweep split over `threads` threads (default 2): the same Solution
 * (values, iters, converged bit for bit; q and policy from the same functions). Worth it only on
 * large models with a spare core (see DEVELOPERS.md); thread start-up costs tens of milliseconds.
 */
export async function valueIterationParallel(model: FiniteModel, reward: Float64Array, opts: ParallelOptions = {}): Promise<Solution> {
  const gamma = opts.gamma ?? model.gamma;
  const sweeps = await prepareParallelSweeps(model, reward, opts);
  let ev: Evaluation;
  try {
    ev = sweeps.run();
  } finally {
    await sweeps.close();
  }
  const q = actionValues(model, reward, ev.values, gamma);
  return { ...ev, policy: greedyActions(model, q), q };
}
