/**
 * Tabular Double Q-learning (van Hasselt 2010; Sutton & Barto 2018, section 6.7, the boxed algorithm):
 *
 *   choose a ~ ε-greedy(Q1(s, ·) + Q2(s, ·)), observe r, s'
 *   with probability 1/2 (draw u < 2^31):
 *     Q1(s, a) ← Q1(s, a) + α · (r + γ · Q2(s', argmax_b Q1(s', b)) − Q1(s, a))
 *   else the same with Q1 and Q2 swapped.  On a terminal s' the target is r.
 *
 * Using one table to pick the action and the other to value it removes Q-learning's maximisation bias.
 * Draw order per step: ε-greedy (one or two draws), the coin (one draw), then any environment draws.
 * The agent acts greedily on Q1 + Q2 (lowest index on ties) and reports (Q1 + Q2) / 2 as its values.
 */
import type { TabularEnv } from "../src/model/learner-view.js";
import { drive, growFloat, type Agent, type TrainOptions, type TrainResult } from "./driver.js";
import { TWO32, argmaxRow, randomAction } from "./selection.js";
import { TabularAgent, TabularRateSession, resolveTabular, type TabularConfig } from "./tabular.js";

export const NAME = "double-q";
const HALF = 2147483648;

/** Double Q-learning settings (α, γ, ε, schedules, initial values; one line per field in TabularConfig). */
export type DoubleQConfig = TabularConfig;

export function resolveDoubleQ(partial: Partial<DoubleQConfig> = {}): DoubleQConfig {
  return resolveTabular(partial, `learner ${NAME}`);
}

/** Index of the largest q1[i] + q2[i] over one row; lowest index on ties. */
function argmaxSum(q1: Float64Array, q2: Float64Array, base: number, nA: number): number {
  let best = 0;
  let m = q1[base] + q2[base];
  for (let b = 1; b < nA; b++) {
    const v = q1[base + b] + q2[base + b];
    if (v > m) {
      m = v;
      best = b;
    }
  }
  return best;
}

class DoubleQAgent extends TabularAgent {
  constructor(private readonly session: DoubleQSession, config: object) {
    super(NAME, session.nA, session.env.actions, () => session.averaged(), config);
  }
  override greedyAction(s: number): number {
    const { q, q2, nA } = this.session;
    if ((s + 1) * nA > q.length) return 0;
    return argmaxSum(q, q2, s * nA, nA);
  }
}

export class DoubleQSession extends TabularRateSession {
  readonly agent: Agent;
  /** The second table; `q` (inherited) is Q1. */
  q2: Float64Array;

  constructor(env: TabularEnv, config: DoubleQConfig, opts: TrainOptions) {
    super(env, config, opts);
    this.q2 = this.q.slice();
    this.agent = new DoubleQAgent(this, config);
  }

  protected override growTables(cap: number): void {
    super.growTables(cap);
    this.q2 = growFloat(this.q2, cap * this.nA, this.initialQ);
  }

  /** (Q1 + Q2) / 2, a fresh array. */
  averaged(): Float64Array {
    const out = new Float64Array(this.q.length);
    for (let i = 0; i < out.length; i++) out[i] = (this.q[i] + this.q2[i]) / 2;
    return out;
  }

  advance(n: number, episodeLimit: number): number {
    const { env, nA, out, rng, envRng, stats } = this;
    const gamma = this.config.gamma;
    for (let i = 0; i < n; i++) {
      const s = this.s;
      const base = s * nA;
      const a = rng.uint32() < this.epsilonNow() * TWO32 ? randomAction(rng, nA) : argmaxSum(this.q, this.q2, base, nA);
      const first = rng.uint32() < HALF;
      env.step(s, a, envRng, out);
      const sp = out.next;
      const r = out.reward;
      if (sp >= this.capacity) this.grow(sp + 1);
      const upd = first ? this.q : this.q2; // the table updated and used to pick the next action
      const other = first ? this.q2 : this.q; // the table that values it
      let target = r;
      if (!out.terminated) {
        const nb = sp * nA;
        target = r + gamma * other[nb + argmaxRow(upd, nb, nA)];
      }
      const sa = base + a;
      const qsa = upd[sa];
      upd[sa] = qsa + this.alphaFor(sa) * (target - qsa);
      if (this.finishStep(r, sp, out.terminated) && stats.episodes >= episodeLimit) return i + 1;
    }
    return n;
  }
}

export function trainDoubleQ(env: TabularEnv, config: Partial<DoubleQConfig>, opts: TrainOptions): TrainResult {
  return drive(new DoubleQSession(env, resolveDoubleQ(config), opts), opts);
}
