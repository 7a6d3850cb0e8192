/**
 * The training options / result types every learner shares, the driver that runs a learner's step loop
 * in chunks between checkpoints, and the option and environment checks.
 *
 * Learners see only a `TabularEnv` (src/model/learner-view.ts). Nothing under policies/ may import the
 * model types' held-out score, the solvers, the monitor, the audit or the pressure code; a test checks it.
 */
import type { Rng } from "../src/rng/rng.js";
import type { TabularEnv } from "../src/model/learner-view.js";
import { InputError } from "../src/errors.js";

/** A trained (or training) agent: enough to act greedily and to save the final policy. */
export interface Agent {
  /** Learner name (a key of `learners` in policies/index.ts). */
  readonly learner: string;
  readonly nActions: number;
  /** Greedy action in state s; ties go to the lowest action index. */
  greedyAction(s: number): number;
  /** Greedy action for states 0..nStates-1. */
  greedyPolicy(nStates: number): Int32Array;
  /** Action values, row-major (state * nActions + action), for the states the learner has sized for. */
  qValues?(): Float64Array;
  /** A JSON-safe description of the final policy (and its values) for saving. */
  toJSON(): object;
}

export interface TrainOptions {
  /** Number of environment steps to run (the budget; training may stop earlier). */
  steps: number;
  /** Exploration stream, used directly (the benchmark reproduces with a Xorshift32 here). */
  rng: Rng;
  /** Stream for the environment's own draws; default `rng.fork("env")`, so env draws never shift exploration. */
  envRng?: Rng;
  /** Call `onCheckpoint` every this many steps (and once at the end). */
  checkpointEvery?: number;
  /** Checkpoint callback, outside the hot loop; returning "stop" ends training. */
  onCheckpoint?: (step: number, agent: Agent, stats: TrainStats) => void | "stop";
  /** Polled between chunks of steps; set `aborted` (e.g. from a SIGINT handler) to stop early. */
  signal?: { aborted: boolean };
  /** Stop once this many episodes have completed (the book's experiments count episodes). */
  maxEpisodes?: number;
}

export interface TrainStats {
  /** Environment steps taken. */
  steps: number;
  /** Completed episodes (terminated + truncated); the unfinished last episode is not counted. */
  episodes: number;
  /** Episodes that ended in a terminal state. */
  terminated: number;
  /** Episodes cut at the horizon (they bootstrap from the last state). */
  truncated: number;
  /** Sum over completed episodes of their undiscounted designer return. */
  returnSum: number;
  /** Undiscounted designer return and length of the last completed episode (NaN / 0 before the first). */
  lastReturn: number;
  lastLength: number;
  /** Completed episodes that terminated in each state (index = state id), e.g. goal vs hazard counts. */
  terminatedAt: Float64Array;
}

export interface TrainResult {
  agent: Agent;
  episodes: number;
  stats: TrainStats;
  /** True when training ended before `steps` (callback "stop", signal, or maxEpisodes). */
  stopped: boolean;
}

/** One learner's training state; `advance(n)` runs up to n environment steps and returns how many it ran. */
export interface Session {
  readonly agent: Agent;
  readonly stats: TrainStats;
  /** Run at most n steps; stop early (returning fewer) when `episodeLimit` episodes have completed. */
  advance(n: number, episodeLimit: number): number;
}

/** Chunk size used when there is no checkpoint, so `signal` is still polled. */
const POLL_CHUNK = 1 << 16;

export function newStats(capacity: number): TrainStats {
  return {
    steps: 0,
    episodes: 0,
    terminated: 0,
    truncated: 0,
    returnSum: 0,
    lastReturn: NaN,
    lastLength: 0,
    terminatedAt: new Float64Array(capacity),
  };
}

/** Grow a Float64Array to at least `need` entries by doubling, filling new entries with `fill`. */
export function growFloat(a: Float64Array, need: number, fill = 0): Float64Array {
  let n = Math.max(1, a.length);
  while (n < need) n *= 2;
  if (n === a.length) return a;
  const b = new Float64Array(n);
  b.set(a);
  if (fill !== 0) b.fill(fill, a.length);
  return b;
}

export function checkTrainOptions(opts: TrainOptions): void {
  if (!(Number.isSafeInteger(opts.steps) && opts.steps >= 0)) {
    throw new InputError("config.steps", `steps must be a non-negative integer, got ${opts.steps}`, "train.steps");
  }
  if (opts.checkpointEvery !== undefined && !(Number.isSafeInteger(opts.checkpointEvery) && opts.checkpointEvery > 0)) {
    throw new InputError("config.checkpointEvery", `checkpointEvery must be a positive integer, got ${opts.checkpointEvery}`, "train.checkpointEvery");
  }
  if (opts.maxEpisodes !== undefined && !(Number.isSafeInteger(opts.maxEpisodes) && opts.maxEpisodes > 0)) {
    throw new InputError("config.maxEpisodes", `maxEpisodes must be a positive integer, got ${opts.maxEpisodes}`, "train.maxEpisodes");
  }
}

function chunkSize(opts: TrainOptions): number {
  return opts.checkpointEvery ?? POLL_CHUNK;
}

/** Where a drive stands between chunks (one object per drive, never per step). */
interface DriveState {
  readonly limit: number;
  readonly every: number;
  done: number;
  stopped: boolean;
  lastCheckpoint: number;
}

function startDrive(opts: TrainOptions): DriveState {
  checkTrainOptions(opts);
  return { limit: opts.maxEpisodes ?? Infinity, every: chunkSize(opts), done: 0, stopped: false, lastCheckpoint: -1 };
}

/**
 * The start of one chunk of a drive: poll `signal` and the episode limit; returns how many steps to run
 * up to the next checkpoint (or the end of the budget), or -1 when the drive must end now.
 */
function chunkStart(session: Session, opts: TrainOptions, st: DriveState): number {
  if (opts.signal?.aborted || session.stats.episodes >= st.limit) {
    st.stopped = true;
    return -1;
  }
  return Math.min(st.every - (st.done % st.every), opts.steps - st.done);
}

/**
 * The end of one chunk that ran `ran` of `want` steps: call `onCheckpoint` when one is due. Returns
 * false when the drive must end now (stopped, or the checkpoint callback said "stop").
 */
function chunkEnd(session: Session, opts: TrainOptions, st: DriveState, want: number, ran: number): boolean {
  st.done += ran;
  if (ran < want) st.stopped = true;
  if (opts.onCheckpoint && opts.checkpointEvery !== undefined && (st.done % st.every === 0 || st.stopped)) {
    st.lastCheckpoint = st.done;
    if (opts.onCheckpoint(st.done, session.agent, session.stats) === "stop") {
      st.stopped = st.done < opts.steps || st.stopped;
      return false;
    }
  }
  return !st.stopped;
}

function driveChunk(session: Session, opts: TrainOptions, st: DriveState): boolean {
  const want = chunkStart(session, opts, st);
  return want >= 0 && chunkEnd(session, opts, st, want, session.advance(want, st.limit));
}

/** Wall-clock length of one batch of steps between event-loop yields in `driveAsync` (ms). */
const BATCH_MS = 25;

/**
 * Run `want` steps in batches of about BATCH_MS each, yielding to the event loop between batches and
 * stopping early when `signal` is set, so Ctrl-C is honoured within a batch rather than a checkpoint.
 * Sessions resume where they stopped, so the split does not change the result.
 */
async function advanceInBatches(session: Session, want: number, limit: number, signal: TrainOptions["signal"], batch: { size: number }): Promise<number> {
  let ran = 0;
  while (ran < want) {
    const n = Math.min(batch.size, want - ran);
    const t0 = performance.now();
    const r = session.advance(n, limit);
    const ms = performance.now() - t0;
    ran += r;
    if (r < n) break;
    if (n === batch.size) batch.size = ms < BATCH_MS / 2 ? Math.min(batch.size * 2, 1 << 20) : ms > BATCH_MS * 2 ? Math.max(1, batch.size >> 1) : batch.size;
    if (ran < want) {
      await new Promise<void>((resolve) => setImmediate(resolve));
      if (signal?.aborted) break;
    }
  }
  return ran;
}

/** The final checkpoint (unless the last chunk just made one) and the result. */
function finishDrive(session: Session, opts: TrainOptions, st: DriveState): TrainResult {
  if (opts.onCheckpoint && st.lastCheckpoint !== st.done) opts.onCheckpoint(st.done, session.agent, session.stats);
  return { agent: session.agent, episodes: session.stats.episodes, stats: session.stats, stopped: st.stopped };
}

/**
 * Run a session for `opts.steps` steps in chunks; between chunks call `onCheckpoint` (every
 * `checkpointEvery` steps, and once at the end) and poll `signal`. Synchronous.
 */
export function drive(session: Session, opts: TrainOptions): TrainResult {
  const st = startDrive(opts);
  while (st.done < opts.steps && driveChunk(session, opts, st));
  return finishDrive(session, opts, st);
}

/**
 * Like `drive`, but yields to the event loop before each chunk and between batches of steps (about
 * BATCH_MS each), so a SIGINT handler can set `signal.aborted` while training runs and the drive stops
 * within a batch (Ctrl-C support in the CLI). Same chunks, same results as `drive` when not aborted.
 */
export async function driveAsync(session: Session, opts: TrainOptions): Promise<TrainResult> {
  const st = startDrive(opts);
  const batch = { size: 64 };
  while (st.done < opts.steps) {
    await new Promise<void>((resolve) => setImmediate(resolve));
    const want = chunkStart(session, opts, st);
    if (want < 0 || !chunkEnd(session, opts, st, want, await advanceInBatches(session, want, st.limit, opts.signal, batch))) break;
  }
  return finishDrive(session, opts, st);
}

/** Check a discount factor; throws `config.gamma`. */
export function checkGamma(gamma: number, where: string): number {
  if (!(Number.isFinite(gamma) && gamma >= 0 && gamma <= 1)) {
    throw new InputError("config.gamma", `gamma must be in [0, 1], got ${gamma}; use e.g. 0.99`, where);
  }
  return gamma;
}

/** Check a finite number; throws `config.<key>`. */
export function checkFinite(v: number, key: string, where: string): number {
  if (!Number.isFinite(v)) throw new InputError(`config.${key}`, `${key} must be a finite number, got ${v}`, where);
  return v;
}

/** Environment helpers every learner uses. */
export function envRngOf(opts: TrainOptions): Rng {
  return opts.envRng ?? opts.rng.fork("env");
}

export function checkEnv(env: TabularEnv, where: string): void {
  if (!(Number.isInteger(env.nActions) && env.nActions >= 1)) {
    throw new InputError("env.actions", `environment ${env.name} has ${env.nActions} actions; a learner needs at least one`, where);
  }
  if (!(Number.isInteger(env.horizon) && env.horizon >= 1)) {
    throw new InputError("env.horizon", `environment ${env.name} has horizon ${env.horizon}; it must be a positive integer`, where);
  }
}
