/**
 * Tabular Expected SARSA (Sutton & Barto 2018, section 6.6, eq. 6.9; van Seijen et al. 2009):
 *
 *   choose a ~ ε-greedy(Q(s, ·)), observe r, s'
 *   target = r                                        if s' is terminal
 *          = r + γ · Σ_b π(b | s') · Q(s', b)          otherwise (also at a truncation)
 *   with π the ε-greedy policy of Q: π(b | s') = ε/|A| + (1 − ε)·[b = argmax Q(s', ·)]
 *   (the same lowest-index tie rule the behaviour policy uses)
 *   Q(s, a) ← Q(s, a) + α · (target − Q(s, a))
 *
 * It is on-policy for the ε-greedy policy, like SARSA, but the expectation removes the variance of a'.
 */
import type { TabularEnv } from "../src/model/learner-view.js";
import { drive, type Agent, type TrainOptions, type TrainResult } from "./driver.js";
import { TWO32, argmaxRow, epsilonGreedy } from "./selection.js";
import { TabularAgent, TabularRateSession, resolveTabular, type TabularConfig } from "./tabular.js";

export const NAME = "expected-sarsa";

/** Expected SARSA settings (α, γ, ε, schedules, initial values; one line per field in TabularConfig). */
export type ExpectedSarsaConfig = TabularConfig;

export function resolveExpectedSarsa(partial: Partial<ExpectedSarsaConfig> = {}): ExpectedSarsaConfig {
  return resolveTabular(partial, `learner ${NAME}`);
}

/** Σ_b π(b|s) Q(s, b) for the ε-greedy policy of row `base`. Pure. */
export function epsilonGreedyExpectation(q: Float64Array, base: number, nA: number, epsilon: number): number {
  let sum = 0;
  for (let b = 0; b < nA; b++) sum += q[base + b];
  return (epsilon / nA) * sum + (1 - epsilon) * q[base + argmaxRow(q, base, nA)];
}

export class ExpectedSarsaSession extends TabularRateSession {
  readonly agent: Agent;

  constructor(env: TabularEnv, config: ExpectedSarsaConfig, opts: TrainOptions) {
    super(env, config, opts);
    this.agent = new TabularAgent(NAME, this.nA, env.actions, () => this.q, config);
  }

  advance(n: number, episodeLimit: number): number {
    const { env, nA, out, rng, envRng, stats } = this;
    const gamma = this.config.gamma;
    for (let i = 0; i < n; i++) {
      const s = this.s;
      const eps = this.epsilonNow();
      const a = epsilonGreedy(this.q, s * nA, nA, eps * TWO32, rng);
      env.step(s, a, envRng, out);
      const sp = out.next;
      const r = out.reward;
      if (sp >= this.capacity) this.grow(sp + 1);
      const q = this.q;
      const target = out.terminated ? r : r + gamma * epsilonGreedyExpectation(q, sp * nA, nA, eps);
      const sa = s * nA + a;
      const qsa = q[sa];
      q[sa] = qsa + this.alphaFor(sa) * (target - qsa);
      if (this.finishStep(r, sp, out.terminated) && stats.episodes >= episodeLimit) return i + 1;
    }
    return n;
  }
}

export function trainExpectedSarsa(env: TabularEnv, config: Partial<ExpectedSarsaConfig>, opts: TrainOptions): TrainResult {
  return drive(new ExpectedSarsaSession(env, resolveExpectedSarsa(config), opts), opts);
}
