/**
 * Tabular SARSA, on-policy TD control (Sutton & Barto 2018, section 6.4, eq. 6.7):
 *
 *   in s with action a (chosen ε-greedily), observe r, s'
 *   if s' is terminal:  target = r
 *   else:               choose a' ~ ε-greedy(Q(s', ·));  target = r + γ · Q(s', a')
 *   Q(s, a) ← Q(s, a) + α · (target − Q(s, a));  s, a ← s', a'
 *
 * At the horizon the episode is truncated, not terminated: the update still bootstraps from Q(s', a')
 * with a' drawn as the policy would, then the environment is reset and a fresh first action chosen.
 * Draw order per step: the ε-greedy draws for a' (one or two), then any environment draws.
 */
import type { TabularEnv } from "../src/model/learner-view.js";
import { drive, type Agent, type TrainOptions, type TrainResult } from "./driver.js";
import { TabularAgent, TabularRateSession, resolveTabular, type TabularConfig } from "./tabular.js";

export const NAME = "sarsa";

/** SARSA settings (α, γ, ε, schedules, initial values; one line per field in TabularConfig). */
export type SarsaConfig = TabularConfig;

export function resolveSarsa(partial: Partial<SarsaConfig> = {}): SarsaConfig {
  return resolveTabular(partial, `learner ${NAME}`);
}

export class SarsaSession extends TabularRateSession {
  readonly agent: Agent;
  /** The action already chosen for the current state, or -1 at the start of an episode. */
  private a = -1;

  constructor(env: TabularEnv, config: SarsaConfig, opts: TrainOptions) {
    super(env, config, opts);
    this.agent = new TabularAgent(NAME, this.nA, env.actions, () => this.q, config);
  }

  advance(n: number, episodeLimit: number): number {
    const { env, nA, out, envRng, stats } = this;
    const gamma = this.config.gamma;
    for (let i = 0; i < n; i++) {
      const s = this.s;
      const a = this.a >= 0 ? this.a : this.behaviourAction(s);
      env.step(s, a, envRng, out);
      const sp = out.next;
      const r = out.reward;
      if (sp >= this.capacity) this.grow(sp + 1);
      let target = r;
      let ap = -1;
      if (!out.terminated) {
        ap = this.behaviourAction(sp);
        target = r + gamma * this.q[sp * nA + ap];
      }
      const q = this.q;
      const sa = s * nA + a;
      const qsa = q[sa];
      q[sa] = qsa + this.alphaFor(sa) * (target - qsa);
      if (this.finishStep(r, sp, out.terminated)) {
        this.a = -1;
        if (stats.episodes >= episodeLimit) return i + 1;
      } else this.a = ap;
    }
    return n;
  }
}

export function trainSarsa(env: TabularEnv, config: Partial<SarsaConfig>, opts: TrainOptions): TrainResult {
  return drive(new SarsaSession(env, resolveSarsa(config), opts), opts);
}
