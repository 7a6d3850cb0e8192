/**
 * What every learner shares: greedy selection with lowest-index ties, epsilon-greedy selection with an
 * integer compare on `rng.uint32()` (so the shared benchmark is reproducible bit for bit), the training
 * options / result types, and the driver that runs a learner's step loop in chunks between checkpoints.
 *
 * Learners see only a `TabularEnv` (src/model/learner-view.ts). Nothing under policies/ may import the
 * model types' held-out score, the solvers, the monitor, the audit or the pressure code; a test checks it.
 */
import type { Rng } from "../src/rng/rng.js";
import type { TabularEnv } from "../src/model/learner-view.js";
import { InputError } from "../src/errors.js";
import { checkSchedule, constantValue, scheduleValue, toSchedule, type Schedule, type ScheduleSpec } from "./schedules.js";

export const TWO32 = 4294967296;

/** Index of the largest of q[base .. base+nA-1]; replaces only on strictly greater, so ties go to the lowest index. */
export function argmaxRow(q: Float64Array, base: number, nA: number): number {
  let best = 0;
  let m = q[base];
  for (let b = 1; b < nA; b++) {
    const v = q[base + b];
    if (v > m) {
      m = v;
      best = b;
    }
  }
  return best;
}

/** Largest of q[base .. base+nA-1] (exact, order-independent). */
export function maxRow(q: Float64Array, base: number, nA: number): number {
  let m = q[base];
  for (let b = 1; b < nA; b++) if (q[base + b] > m) m = q[base + b];
  return m;
}

/**
 * Epsilon-greedy over row `base` of q. `threshold = epsilon * 2^32`: explore iff the first draw
 * u1 < threshold (for epsilon 0.1 this is the benchmark's integer compare u1 < 429496730); an explore
 * step draws u2 and takes floor(u2 * nA / 2^32) (= u2 >>> 30 for four actions; both products are exact
 * in binary64). One draw on an exploit step, two on an explore step.
 */
export function epsilonGreedy(q: Float64Array, base: number, nA: number, threshold: number, rng: Rng): number {
  if (rng.uint32() < threshold) return randomAction(rng, nA);
  return argmaxRow(q, base, nA);
}

/** The explore step's action: one draw u, floor(u * nA / 2^32) (uniform over 0..nA-1). */
export function randomAction(rng: Rng, nA: number): number {
  return Math.floor((rng.uint32() * nA) / TWO32);
}

/** Probability that `epsilonGreedy` returns the greedy action (ties broken to the lowest index). */
export function greedyProbability(epsilon: number, nA: number): number {
  return 1 - epsilon + epsilon / nA;
}

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
 * One chunk of a drive: poll `signal` and the episode limit, run up to the next checkpoint (or the
 * end of the budget), then call `onCheckpoint` when one is due. Returns false when the drive must end
 * now (stopped, or the checkpoint callback said "stop").
 */
function driveChunk(session: Session, opts: TrainOptions, st: DriveState): boolean {
  if (opts.signal?.aborted || session.stats.episodes >= st.limit) {
    st.stopped = true;
    return false;
  }
  const want = Math.min(st.every - (st.done % st.every), opts.steps - st.done);
  const ran = session.advance(want, st.limit);
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
 * Like `drive`, but yields to the event loop before each chunk, so a SIGINT handler can set
 * `signal.aborted` while training runs (Ctrl-C support in the CLI). Same chunks, same results as `drive`.
 */
export async function driveAsync(session: Session, opts: TrainOptions): Promise<TrainResult> {
  const st = startDrive(opts);
  while (st.done < opts.steps) {
    await new Promise<void>((resolve) => setImmediate(resolve));
    if (!driveChunk(session, opts, st)) break;
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

/**
 * The shared tabular agent: one Float64Array of action values, row-major by state, that may grow when
 * the environment discovers states. Learners with two tables (Double Q) combine them before reading.
 */
export class TabularAgent implements Agent {
  constructor(
    readonly learner: string,
    readonly nActions: number,
    readonly actions: readonly string[],
    /** Returns the current value table (it may be replaced when the table grows). */
    private readonly table: () => Float64Array,
    private readonly config: object,
  ) {}

  greedyAction(s: number): number {
    const q = this.table();
    const base = s * this.nActions;
    if (base + this.nActions > q.length) return 0; // never seen: all values equal the initial value
    return argmaxRow(q, base, this.nActions);
  }

  greedyPolicy(nStates: number): Int32Array {
    const pi = new Int32Array(nStates);
    for (let s = 0; s < nStates; s++) pi[s] = this.greedyAction(s);
    return pi;
  }

  qValues(): Float64Array {
    return this.table().slice();
  }

  toJSON(): object {
    const q = this.table();
    const nStates = Math.floor(q.length / this.nActions);
    return {
      format: "gapwatch-policy/1",
      learner: this.learner,
      config: this.config,
      nStates,
      actions: [...this.actions],
      greedy: Array.from(this.greedyPolicy(nStates)),
      q: Array.from(q),
    };
  }
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

/**
 * Bookkeeping shared by the tabular learners' step loops: the value table sized by
 * `env.stateCapacity()` (grown by doubling, outside the per-step path, when a discovered-state
 * environment reports a larger id), the current state and episode clock, the episode statistics, and
 * one reused StepOut. Each learner's file holds its own selection and update rule in `advance`.
 */
export abstract class TabularSession implements Session {
  readonly stats: TrainStats;
  readonly nA: number;
  readonly horizon: number;
  /** Row-major action values; replaced (never mutated in size) when the table grows. */
  q: Float64Array;
  /** Number of states the tables are sized for. */
  capacity: number;
  /** Current state, steps into the current episode, and its undiscounted return so far. */
  s: number;
  t = 0;
  ret = 0;
  readonly out = { next: 0, reward: 0, terminated: false };
  readonly envRng: Rng;
  abstract readonly agent: Agent;

  constructor(
    readonly env: TabularEnv,
    readonly rng: Rng,
    envRng: Rng,
    readonly initialQ: number,
  ) {
    checkEnv(env, "env");
    this.nA = env.nActions;
    this.horizon = env.horizon;
    this.envRng = envRng;
    this.capacity = Math.max(1, env.stateCapacity());
    this.q = new Float64Array(this.capacity * this.nA);
    if (initialQ !== 0) this.q.fill(initialQ);
    this.stats = newStats(this.capacity);
    this.s = env.reset(envRng);
    if (this.s >= this.capacity) this.grow(this.s + 1);
  }

  abstract advance(n: number, episodeLimit: number): number;

  /** Make room for state ids < need (doubling). Subclasses with more tables extend `growTables`. */
  grow(need: number): void {
    let cap = this.capacity;
    while (cap < need) cap *= 2;
    if (cap === this.capacity) return;
    this.growTables(cap);
    this.capacity = cap;
    this.stats.terminatedAt = growFloat(this.stats.terminatedAt, cap);
  }

  protected growTables(cap: number): void {
    this.q = growFloat(this.q, cap * this.nA, this.initialQ);
  }

  /**
   * Close the step from `this.s` that earned r and landed in sp: count it and its reward, then either
   * end the episode (sp terminal, or the horizon reached; see `endEpisode`) or move on to sp.
   * Returns true when the episode ended (the caller then checks its episode limit).
   */
  finishStep(r: number, sp: number, terminated: boolean): boolean {
    this.stats.steps++;
    this.t++;
    this.ret += r;
    if (terminated || this.t === this.horizon) {
      this.endEpisode(terminated, sp);
      return true;
    }
    this.s = sp;
    return false;
  }

  /** Record the end of an episode after the step that landed in `last`, and reset the environment. */
  endEpisode(terminated: boolean, last: number): void {
    const st = this.stats;
    st.episodes++;
    if (terminated) {
      st.terminated++;
      st.terminatedAt[last]++;
    } else st.truncated++;
    st.returnSum += this.ret;
    st.lastReturn = this.ret;
    st.lastLength = this.t;
    this.t = 0;
    this.ret = 0;
    this.s = this.env.reset(this.envRng);
    if (this.s >= this.capacity) this.grow(this.s + 1);
  }
}

/** Settings every tabular learner shares (each learner's config extends this). */
export interface TabularConfig {
  /** Step size α: a number (constant) or a schedule over `alphaClock`. */
  alpha: ScheduleSpec;
  /** Discount γ in [0, 1] (pass the model's gamma; γ = 1 relies on termination or the horizon). */
  gamma: number;
  /** Exploration rate ε of the ε-greedy behaviour policy: a number or a schedule over `epsilonClock`. */
  epsilon: ScheduleSpec;
  /** Initial value of every action value (optimistic initialisation when above the returns). */
  initialQ: number;
  /** What the α schedule counts: environment steps, or earlier updates of the same (s, a) (1/n sample averages). */
  alphaClock: "steps" | "visits";
  /** What the ε schedule counts: environment steps or completed episodes. */
  epsilonClock: "steps" | "episodes";
}

export const tabularDefaults: TabularConfig = {
  alpha: 0.1,
  gamma: 0.99,
  epsilon: 0.1,
  initialQ: 0,
  alphaClock: "steps",
  epsilonClock: "steps",
};

/** Fill defaults and validate; `where` names the config (e.g. "learner q-learning"). Throws InputError. */
export function resolveTabular(partial: Partial<TabularConfig>, where: string): TabularConfig {
  const c: TabularConfig = { ...tabularDefaults };
  for (const key of Object.keys(tabularDefaults) as (keyof TabularConfig)[]) {
    if (partial[key] !== undefined) (c as unknown as Record<string, unknown>)[key] = partial[key];
  }
  checkSchedule(c.alpha, 0, 1, `${where}.alpha`, true);
  checkSchedule(c.epsilon, 0, 1, `${where}.epsilon`);
  checkGamma(c.gamma, `${where}.gamma`);
  checkFinite(c.initialQ, "initialQ", `${where}.initialQ`);
  if (c.alphaClock !== "steps" && c.alphaClock !== "visits") {
    throw new InputError("config.alphaClock", `alphaClock must be "steps" or "visits", got ${JSON.stringify(c.alphaClock)}`, `${where}.alphaClock`);
  }
  if (c.epsilonClock !== "steps" && c.epsilonClock !== "episodes") {
    throw new InputError("config.epsilonClock", `epsilonClock must be "steps" or "episodes", got ${JSON.stringify(c.epsilonClock)}`, `${where}.epsilonClock`);
  }
  return c;
}

/**
 * A tabular session with the shared rate bookkeeping: α and ε read from their schedules and clocks.
 * Constant schedules are read once.
 */
export abstract class TabularRateSession extends TabularSession {
  readonly alpha: Schedule;
  readonly epsilon: Schedule;
  readonly alphaConst: number | undefined;
  readonly epsilonConst: number | undefined;
  /** Earlier updates per (s, a), kept only when alphaClock is "visits". */
  visits: Float64Array | null;

  constructor(
    env: TabularEnv,
    readonly config: TabularConfig,
    opts: TrainOptions,
  ) {
    super(env, opts.rng, envRngOf(opts), config.initialQ);
    this.alpha = toSchedule(config.alpha);
    this.epsilon = toSchedule(config.epsilon);
    this.alphaConst = config.alphaClock === "steps" ? constantValue(this.alpha) : undefined;
    this.epsilonConst = constantValue(this.epsilon);
    this.visits = config.alphaClock === "visits" ? new Float64Array(this.q.length) : null;
  }

  protected override growTables(cap: number): void {
    super.growTables(cap);
    if (this.visits) this.visits = growFloat(this.visits, cap * this.nA);
  }

  /** α for an update of row-major pair index sa (counts the visit when alphaClock is "visits"). */
  alphaFor(sa: number): number {
    if (this.alphaConst !== undefined) return this.alphaConst;
    if (this.visits) return scheduleValue(this.alpha, this.visits[sa]++);
    return scheduleValue(this.alpha, this.stats.steps);
  }

  /** Current ε. */
  epsilonNow(): number {
    if (this.epsilonConst !== undefined) return this.epsilonConst;
    return scheduleValue(this.epsilon, this.config.epsilonClock === "steps" ? this.stats.steps : this.stats.episodes);
  }

  /** The behaviour policy's action in state s: ε-greedy on `q` at the current ε (one or two draws). */
  behaviourAction(s: number): number {
    return epsilonGreedy(this.q, s * this.nA, this.nA, this.epsilonNow() * TWO32, this.rng);
  }
}
