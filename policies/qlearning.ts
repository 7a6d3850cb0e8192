/**
 * Tabular Q-learning (Watkins 1989; Sutton & Barto 2018, section 6.5, eq. 6.8):
 *
 *   choose a ~ ε-greedy(Q(s, ·)), observe r, s'
 *   target = r                          if s' is terminal
 *          = r + γ · max_b Q(s', b)      otherwise (also when the episode is truncated at the horizon)
 *   Q(s, a) ← Q(s, a) + α · (target − Q(s, a))
 *
 * With constant α = 0.1, γ = 0.99, ε = 0.1 and a Xorshift32 exploration stream this is exactly the loop
 * of the shared benchmark (bench PROBLEM.md section 5): one draw on an exploit step, two on an explore
 * step, ties to the lowest action index, operations in the order written, no fused multiply-add.
 *
 * Two loops, identical results: a generic one over any `TabularEnv`, and a fast path, taken when the
 * environment is a `viewEnv` (it exposes `view`) and α, ε are constant, that inlines outcome sampling
 * over the view's typed arrays.
 */
import type { LearnerView, TabularEnv } from "../src/model/learner-view.js";
import { sampleStart } from "../src/model/learner-view.js";
import { drive, type Agent, type TrainOptions, type TrainResult } from "./driver.js";
import { TWO32, maxRow } from "./selection.js";
import { TabularAgent, TabularRateSession, resolveTabular, type TabularConfig } from "./tabular.js";

export const NAME = "q-learning";

/** Q-learning settings (α, γ, ε and their schedules; see TabularConfig for one line per field). */
export interface QLearningConfig extends TabularConfig {
  /** Use the inlined loop over a model view when possible (results are identical; false forces the generic loop). */
  fastPath: boolean;
}

export function resolveQLearning(partial: Partial<QLearningConfig> = {}): QLearningConfig {
  return { ...resolveTabular(partial, `learner ${NAME}`), fastPath: partial.fastPath ?? true };
}

export class QLearningSession extends TabularRateSession {
  readonly agent: Agent;
  private readonly view: LearnerView | null;
  /** True when the view has four actions and one outcome per pair (grids such as the benchmark's). */
  private readonly deterministic4: boolean;

  constructor(env: TabularEnv, config: QLearningConfig, opts: TrainOptions) {
    super(env, config, opts);
    this.agent = new TabularAgent(NAME, this.nA, env.actions, () => this.q, config);
    const v = (env as { view?: LearnerView }).view;
    const fast = config.fastPath && v !== undefined && this.alphaConst !== undefined && this.epsilonConst !== undefined;
    this.view = fast && v.nStates <= this.capacity ? v : null;
    this.deterministic4 = this.view !== null && this.nA === 4 && isDeterministic(this.view);
  }

  advance(n: number, episodeLimit: number): number {
    if (this.view === null) return this.advanceGeneric(n, episodeLimit);
    return this.deterministic4 ? this.advanceDeterministic4(this.view, n, episodeLimit) : this.advanceView(this.view, n, episodeLimit);
  }

  /** The generic loop: any TabularEnv, any schedules. */
  private advanceGeneric(n: number, episodeLimit: number): number {
    const { env, nA, out, envRng, stats } = this;
    const gamma = this.config.gamma;
    for (let i = 0; i < n; i++) {
      const s = this.s;
      const base = s * nA;
      const a = this.behaviourAction(s);
      env.step(s, a, envRng, out);
      const sp = out.next;
      const r = out.reward;
      if (sp >= this.capacity) this.grow(sp + 1);
      const q = this.q;
      const target = out.terminated ? r : r + gamma * maxRow(q, sp * nA, nA);
      const sa = base + a;
      const qsa = q[sa];
      q[sa] = qsa + this.alphaFor(sa) * (target - qsa);
      if (this.finishStep(r, sp, out.terminated) && stats.episodes >= episodeLimit) return i + 1;
    }
    return n;
  }

  /**
   * The fast path: constant α and ε, the model view's arrays in locals, outcome sampling inlined
   * (the same draws as `sampleOutcome`: none for single-outcome pairs). No allocation per step.
   */
  private advanceView(view: LearnerView, n: number, episodeLimit: number): number {
    const { nA, horizon, rng, envRng, stats } = this;
    const q = this.q; // the view's state count fits the table, so it never grows here
    const saStart = view.saStart;
    const next = view.next;
    const cum = view.cumProb;
    const rew = view.reward;
    const term = view.terminal;
    const terminatedAt = stats.terminatedAt;
    const gamma = this.config.gamma;
    const alpha = this.alphaConst as number;
    const threshold = (this.epsilonConst as number) * TWO32;
    let s = this.s;
    let t = this.t;
    let ret = this.ret;
    let i = 0;
    for (; i < n; i++) {
      const base = s * nA;
      // ε-greedy: u1 < ε·2^32 explores with a = floor(u2·nA / 2^32); else argmax, lowest index on ties.
      let a = 0;
      if (rng.uint32() < threshold) {
        a = Math.floor((rng.uint32() * nA) / TWO32);
      } else {
        let m = q[base];
        for (let b = 1; b < nA; b++) {
          if (q[base + b] > m) {
            m = q[base + b];
            a = b;
          }
        }
      }
      const sa = base + a;
      let o = saStart[sa];
      const hi = saStart[sa + 1] - 1;
      if (o !== hi) {
        const u = envRng.float();
        while (o < hi && !(u < cum[o])) o++;
      }
      const sp = next[o];
      const r = rew[o];
      const done = term[sp] === 1;
      let target = r;
      if (!done) {
        const nb = sp * nA;
        let m = q[nb];
        for (let b = 1; b < nA; b++) if (q[nb + b] > m) m = q[nb + b];
        target = r + gamma * m;
      }
      const qsa = q[sa];
      q[sa] = qsa + alpha * (target - qsa);
      t++;
      ret += r;
      if (done || t === horizon) {
        stats.episodes++;
        if (done) {
          stats.terminated++;
          terminatedAt[sp]++;
        } else stats.truncated++;
        stats.returnSum += ret;
        stats.lastReturn = ret;
        stats.lastLength = t;
        t = 0;
        ret = 0;
        s = sampleStart(view, envRng);
        if (stats.episodes >= episodeLimit) {
          i++;
          break;
        }
      } else s = sp;
    }
    stats.steps += i;
    this.s = s;
    this.t = t;
    this.ret = ret;
    return i;
  }

  /**
   * The benchmark's case: four actions, one outcome per (s, a), constant α and ε. Same arithmetic and
   * draws as `advanceView`, with the argmax / max unrolled and no sampling code in the loop (V8 keeps
   * this loop about 1.5-2x faster than the general one; measured on the 32x32 benchmark grid).
   */
  private advanceDeterministic4(view: LearnerView, n: number, episodeLimit: number): number {
    const { horizon, rng, stats } = this;
    const q = this.q;
    const next = view.next;
    const rew = view.reward;
    const term = view.terminal;
    const gamma = this.config.gamma;
    const alpha = this.alphaConst as number;
    const threshold = (this.epsilonConst as number) * TWO32;
    let s = this.s;
    let t = this.t;
    let ret = this.ret;
    let i = 0;
    for (; i < n; i++) {
      const base = s << 2;
      let a = 0;
      if (rng.uint32() < threshold) {
        a = rng.uint32() >>> 30; // = floor(u2 · 4 / 2^32)
      } else {
        let m = q[base];
        if (q[base + 1] > m) {
          m = q[base + 1];
          a = 1;
        }
        if (q[base + 2] > m) {
          m = q[base + 2];
          a = 2;
        }
        if (q[base + 3] > m) a = 3;
      }
      // One outcome per pair, so outcome index = pair index (saStart[k] === k): no saStart load.
      const sa = base + a;
      const sp = next[sa];
      const r = rew[sa];
      const done = term[sp] === 1;
      let target = r;
      if (!done) {
        const nb = sp << 2;
        let m = q[nb];
        if (q[nb + 1] > m) m = q[nb + 1];
        if (q[nb + 2] > m) m = q[nb + 2];
        if (q[nb + 3] > m) m = q[nb + 3];
        target = r + gamma * m;
      }
      const qsa = q[sa];
      q[sa] = qsa + alpha * (target - qsa);
      t++;
      ret += r;
      if (done || t === horizon) {
        this.s = sp;
        this.t = t;
        this.ret = ret;
        this.endEpisode(done, sp);
        s = this.s;
        t = 0;
        ret = 0;
        if (stats.episodes >= episodeLimit) {
          i++;
          break;
        }
      } else s = sp;
    }
    stats.steps += i;
    this.s = s;
    this.t = t;
    this.ret = ret;
    return i;
  }
}

/** True when every (s, a) of the view has exactly one outcome (no environment draws at all). */
export function isDeterministic(view: LearnerView): boolean {
  const k = view.nStates * view.nActions;
  return view.saStart[k] === k;
}

/** Train Q-learning for `opts.steps` environment steps (see `drive` for checkpoints and stopping). */
export function trainQLearning(env: TabularEnv, config: Partial<QLearningConfig>, opts: TrainOptions): TrainResult {
  return drive(new QLearningSession(env, resolveQLearning(config), opts), opts);
}
