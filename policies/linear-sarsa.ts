/**
 * Episodic semi-gradient SARSA with a linear action-value function over binary features
 * (Sutton & Barto 2018, section 10.1, boxed algorithm; features by tile coding, section 9.5.4):
 *
 *   q(s, a; w) = Σ_{i ∈ F(s)} w[a][i]           F(s): the active features of s
 *   δ = r − q(s, a)                              if s' is terminal
 *   δ = r + γ · q(s', a') − q(s, a)              otherwise, a' ~ ε-greedy(q(s', ·)) (also at a truncation)
 *   w[a][i] ← w[a][i] + (α / |F(s)|) · δ         for i ∈ F(s)
 *
 * Features: "tiles" tile-codes the environment's numeric observation (`observe`, `obsDim`); "one-hot"
 * gives each state its own feature, which makes this exactly tabular SARSA. The step size is divided
 * by the number of active features, so α = 1 would move q(s, a) all the way to the target (the book's
 * "α = 1/n" discussion in 9.5.4). Active features are computed once per state and cached.
 */
import type { TabularEnv } from "../src/model/learner-view.js";
import { InputError } from "../src/errors.js";
import { TileCoder, type TileCodingConfig } from "./tile-coding.js";
import { checkEnv, drive, envRngOf, newStats, growFloat, type Agent, type Session, type TrainOptions, type TrainResult, type TrainStats } from "./driver.js";
import { TWO32 } from "./selection.js";
import { resolveTabular, type TabularConfig } from "./tabular.js";
import { constantValue, scheduleValue, toSchedule, type Schedule } from "./schedules.js";
import type { Rng } from "../src/rng/rng.js";

export const NAME = "linear-sarsa";

/** Linear SARSA settings; α, γ, ε, schedules and initialQ as in TabularConfig (α is per active-feature set). */
export interface LinearSarsaConfig extends TabularConfig {
  /** Feature construction: tile coding of the observation, or one indicator per state. */
  features: "tiles" | "one-hot";
  /** Tile coding settings (features = "tiles"). */
  tiling: TileCodingConfig;
}

export function resolveLinearSarsa(partial: Partial<LinearSarsaConfig> = {}): LinearSarsaConfig {
  const base = resolveTabular(partial, `learner ${NAME}`);
  const features = partial.features ?? "tiles";
  if (features !== "tiles" && features !== "one-hot") {
    throw new InputError("config.features", `features must be "tiles" or "one-hot", got ${JSON.stringify(features)}`, `learner ${NAME}.features`);
  }
  return { ...base, features, tiling: partial.tiling ?? { tilings: 8, tiles: 8 } };
}

/** Observation bounds over the environment's states (for tile coding without explicit bounds). */
function observedBounds(env: TabularEnv): { low: number[]; high: number[] } {
  const dim = env.obsDim as number;
  const x = new Float64Array(dim);
  const low = new Array(dim).fill(Infinity);
  const high = new Array(dim).fill(-Infinity);
  for (let s = 0; s < env.stateCapacity(); s++) {
    env.observe!(s, x);
    for (let j = 0; j < dim; j++) {
      if (x[j] < low[j]) low[j] = x[j];
      if (x[j] > high[j]) high[j] = x[j];
    }
  }
  for (let j = 0; j < dim; j++) if (!(high[j] > low[j])) high[j] = low[j] + 1;
  return { low, high };
}

export class LinearSarsaSession implements Session {
  readonly agent: Agent;
  readonly stats: TrainStats;
  private readonly nA: number;
  private readonly nActive: number;
  private readonly coder: TileCoder | null;
  /** Number of features per action (grows with the state capacity for one-hot). */
  private size: number;
  private capacity: number;
  w: Float64Array;
  private cache: Int32Array;
  private cached: Uint8Array;
  private readonly obs: Float64Array;
  private readonly alpha: Schedule;
  private readonly epsilon: Schedule;
  private readonly alphaConst: number | undefined;
  private readonly epsilonConst: number | undefined;
  private readonly rng: Rng;
  private readonly envRng: Rng;
  private readonly out = { next: 0, reward: 0, terminated: false };
  private s: number;
  private a = -1;
  private t = 0;
  private ret = 0;

  constructor(
    private readonly env: TabularEnv,
    readonly config: LinearSarsaConfig,
    opts: TrainOptions,
  ) {
    checkEnv(env, "env");
    this.nA = env.nActions;
    this.capacity = Math.max(1, env.stateCapacity());
    if (config.features === "tiles") {
      if (!env.observe || !env.obsDim) {
        throw new InputError("env.observations", `environment ${env.name} has no numeric observation; use features "one-hot" or add observations`, `learner ${NAME}.features`);
      }
      const b = config.tiling.low && config.tiling.high ? { low: config.tiling.low, high: config.tiling.high } : observedBounds(env);
      this.coder = new TileCoder({ tilings: config.tiling.tilings, tiles: config.tiling.tiles, low: config.tiling.low ?? b.low, high: config.tiling.high ?? b.high });
      this.nActive = this.coder.tilings;
      this.size = this.coder.size;
    } else {
      this.coder = null;
      this.nActive = 1;
      this.size = this.capacity;
    }
    this.obs = new Float64Array(env.obsDim ?? 1);
    this.w = new Float64Array(this.size * this.nA).fill(config.initialQ / this.nActive);
    this.cache = new Int32Array(this.capacity * this.nActive);
    this.cached = new Uint8Array(this.capacity);
    this.alpha = toSchedule(config.alpha);
    this.epsilon = toSchedule(config.epsilon);
    this.alphaConst = config.alphaClock === "steps" ? constantValue(this.alpha) : undefined;
    this.epsilonConst = constantValue(this.epsilon);
    if (config.alphaClock === "visits") throw new InputError("config.alphaClock", `${NAME} has no per-pair visit counts; use alphaClock "steps"`, `learner ${NAME}.alphaClock`);
    this.rng = opts.rng;
    this.envRng = envRngOf(opts);
    this.stats = newStats(this.capacity);
    this.s = env.reset(this.envRng);
    this.ensure(this.s);
    this.agent = this.makeAgent();
  }

  /** Make sure state s fits the caches (doubling), outside the per-step path. */
  private ensure(s: number): void {
    if (s < this.capacity) return;
    let cap = this.capacity;
    while (cap <= s) cap *= 2;
    const cache = new Int32Array(cap * this.nActive);
    cache.set(this.cache);
    const cached = new Uint8Array(cap);
    cached.set(this.cached);
    this.cache = cache;
    this.cached = cached;
    if (!this.coder) {
      // one-hot: weights are action-major, so re-lay them out for the larger feature count.
      const w = new Float64Array(cap * this.nA).fill(this.config.initialQ);
      for (let a = 0; a < this.nA; a++) for (let f = 0; f < this.size; f++) w[a * cap + f] = this.w[a * this.size + f];
      this.w = w;
      this.size = cap;
    }
    this.stats.terminatedAt = growFloat(this.stats.terminatedAt, cap);
    this.capacity = cap;
  }

  /** Offset of s's active features in the cache (computing them on first use). */
  private features(s: number): number {
    const base = s * this.nActive;
    if (this.cached[s] === 0) {
      if (this.coder) {
        this.env.observe!(s, this.obs);
        this.coder.active(this.obs, this.cache.subarray(base, base + this.nActive));
      } else this.cache[base] = s;
      this.cached[s] = 1;
    }
    return base;
  }

  /** q(s, a) from the active features at cache offset fb. */
  private value(fb: number, a: number): number {
    let v = 0;
    const off = a * this.size;
    for (let i = 0; i < this.nActive; i++) v += this.w[off + this.cache[fb + i]];
    return v;
  }

  greedy(s: number): number {
    if (s >= this.capacity) return 0;
    const fb = this.features(s);
    let best = 0;
    let m = this.value(fb, 0);
    for (let b = 1; b < this.nA; b++) {
      const v = this.value(fb, b);
      if (v > m) {
        m = v;
        best = b;
      }
    }
    return best;
  }

  private choose(s: number): number {
    const eps = this.epsilonConst ?? scheduleValue(this.epsilon, this.config.epsilonClock === "steps" ? this.stats.steps : this.stats.episodes);
    if (this.rng.uint32() < eps * TWO32) return Math.floor((this.rng.uint32() * this.nA) / TWO32);
    return this.greedy(s);
  }

  advance(n: number, episodeLimit: number): number {
    const { env, out, stats } = this;
    const gamma = this.config.gamma;
    const horizon = env.horizon;
    for (let i = 0; i < n; i++) {
      const s = this.s;
      const a = this.a >= 0 ? this.a : this.choose(s);
      env.step(s, a, this.envRng, out);
      const sp = out.next;
      const r = out.reward;
      this.ensure(sp);
      const fb = this.features(s);
      let target = r;
      let ap = -1;
      if (!out.terminated) {
        ap = this.choose(sp);
        target = r + gamma * this.value(this.features(sp), ap);
      }
      const delta = target - this.value(fb, a);
      const step = ((this.alphaConst ?? scheduleValue(this.alpha, stats.steps)) / this.nActive) * delta;
      const off = a * this.size;
      for (let k = 0; k < this.nActive; k++) this.w[off + this.cache[fb + k]] += step;
      stats.steps++;
      this.t++;
      this.ret += r;
      if (out.terminated || this.t === horizon) {
        stats.episodes++;
        if (out.terminated) {
          stats.terminated++;
          stats.terminatedAt[sp]++;
        } else stats.truncated++;
        stats.returnSum += this.ret;
        stats.lastReturn = this.ret;
        stats.lastLength = this.t;
        this.t = 0;
        this.ret = 0;
        this.a = -1;
        this.s = env.reset(this.envRng);
        this.ensure(this.s);
        if (stats.episodes >= episodeLimit) return i + 1;
      } else {
        this.s = sp;
        this.a = ap;
      }
    }
    return n;
  }

  /** q(s, ·) for states 0..capacity-1, row-major. */
  qTable(): Float64Array {
    const q = new Float64Array(this.capacity * this.nA);
    for (let s = 0; s < this.capacity; s++) {
      const fb = this.features(s);
      for (let a = 0; a < this.nA; a++) q[s * this.nA + a] = this.value(fb, a);
    }
    return q;
  }

  private makeAgent(): Agent {
    const self = this;
    return {
      learner: NAME,
      nActions: this.nA,
      greedyAction: (s) => self.greedy(s),
      greedyPolicy(nStates) {
        const pi = new Int32Array(nStates);
        for (let s = 0; s < nStates; s++) pi[s] = self.greedy(s);
        return pi;
      },
      qValues: () => self.qTable(),
      toJSON: () => ({
        format: "gapwatch-policy/1",
        learner: NAME,
        config: self.config,
        actions: [...self.env.actions],
        features: self.config.features,
        tiling: self.coder ? { tilings: self.coder.tilings, tiles: Array.from(self.coder.tiles), low: Array.from(self.coder.low), width: Array.from(self.coder.width) } : undefined,
        weights: Array.from(self.w),
        greedy: Array.from(this.agent.greedyPolicy(self.capacity)),
      }),
    };
  }
}

export function trainLinearSarsa(env: TabularEnv, config: Partial<LinearSarsaConfig>, opts: TrainOptions): TrainResult {
  return drive(new LinearSarsaSession(env, resolveLinearSarsa(config), opts), opts);
}
