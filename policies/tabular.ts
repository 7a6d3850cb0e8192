/**
 * What the tabular learners share: the agent over one value table, the session bookkeeping of their step
 * loops, and the common settings (step size and exploration schedules, discount, initial value).
 *
 * Learners see only a `TabularEnv` (src/model/learner-view.ts). Nothing under policies/ may import the
 * model types' held-out score, the solvers, the monitor, the audit or the pressure code; a test checks it.
 */
import type { Rng } from "../src/rng/rng.js";
import type { TabularEnv } from "../src/model/learner-view.js";
import { InputError } from "../src/errors.js";
import { checkEnv, checkFinite, checkGamma, envRngOf, growFloat, newStats, type Agent, type Session, type TrainOptions, type TrainStats } from "./driver.js";
import { checkSchedule, constantValue, scheduleValue, toSchedule, type Schedule, type ScheduleSpec } from "./schedules.js";
import { argmaxRow, epsilonGreedy, TWO32 } from "./selection.js";

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
