/**
 * Random small MDPs for property tests of the solvers (fast-check): state 0 is the start and never
 * terminal, 1..3 weighted outcomes per pair normalized to probabilities, one reward feature "r".
 * `deterministic` keeps only each pair's first outcome (true), all of them (false), or lets fast-check
 * choose per model (undefined), so the deterministic fast paths and the general one both run.
 */
import fc from "fast-check";
import { ModelBuilder } from "../../src/model/builder.js";
import type { FiniteModel } from "../../src/model/types.js";

export interface Mdp {
  model: FiniteModel;
  /** Designer reward per outcome (the "r" feature). */
  reward: Float64Array;
  gamma: number;
}

export interface RandomMdpOptions {
  states: [number, number];
  actions: [number, number];
  gamma: [number, number];
  deterministic?: boolean;
  /** Largest integer outcome weight (default 5). */
  maxWeight?: number;
  /** Rewards are drawn from [-rewardRange, rewardRange] (default 1). */
  rewardRange?: number;
}

export function randomMdp(opts: RandomMdpOptions): fc.Arbitrary<Mdp> {
  const maxWeight = opts.maxWeight ?? 5;
  const range = opts.rewardRange ?? 1;
  return fc
    .record({
      nS: fc.integer({ min: opts.states[0], max: opts.states[1] }),
      nA: fc.integer({ min: opts.actions[0], max: opts.actions[1] }),
      det: opts.deterministic === undefined ? fc.boolean() : fc.constant(opts.deterministic),
      gamma: fc.double({ min: opts.gamma[0], max: opts.gamma[1], noNaN: true }),
    })
    .chain(({ nS, nA, det, gamma }) =>
      fc.record({
        nS: fc.constant(nS),
        nA: fc.constant(nA),
        det: fc.constant(det),
        gamma: fc.constant(gamma),
        terminal: fc.array(fc.boolean(), { minLength: nS, maxLength: nS }),
        pairs: fc.array(
          fc.array(
            fc.record({
              next: fc.integer({ min: 0, max: nS - 1 }),
              weight: fc.integer({ min: 1, max: maxWeight }),
              reward: fc.double({ min: -range, max: range, noNaN: true }),
            }),
            { minLength: 1, maxLength: 3 },
          ),
          { minLength: nS * nA, maxLength: nS * nA },
        ),
      }),
    )
    .map(({ nS, nA, det, gamma, terminal, pairs }) => {
      const b = new ModelBuilder({ name: "random", nStates: nS, actions: Array.from({ length: nA }, (_, a) => `a${a}`), features: ["r"], gamma, horizon: 100 });
      for (let s = 1; s < nS; s++) if (terminal[s]) b.setTerminal(s);
      for (let k = 0; k < nS * nA; k++) {
        const outs = det ? pairs[k].slice(0, 1) : pairs[k];
        const total = outs.reduce((acc, o) => acc + o.weight, 0);
        for (const o of outs) b.addOutcome(Math.floor(k / nA), k % nA, o.next, o.weight / total, [o.reward]);
      }
      b.setStart(0, 1);
      const model = b.build();
      return { model, reward: Float64Array.from(model.featureValues), gamma };
    });
}

/**
 * `model` rebuilt pair by pair with one reward feature "r": terminal states stay terminal, states
 * added beyond model.nStates are terminal, the start distribution is kept, and `emit(b, s, a, k)`
 * writes the outcomes of each live pair (s, a) of `model` (k = s * nActions + a).
 */
export function rebuildModel(
  model: FiniteModel,
  spec: { name: string; nStates?: number; actions?: readonly string[]; gamma?: number },
  emit: (b: ModelBuilder, s: number, a: number, k: number) => void,
): FiniteModel {
  const nS = spec.nStates ?? model.nStates;
  const b = new ModelBuilder({ name: spec.name, nStates: nS, actions: spec.actions ?? model.actions, features: ["r"], gamma: spec.gamma ?? model.gamma, horizon: 100 });
  for (let s = model.nStates; s < nS; s++) b.setTerminal(s);
  for (let s = 0; s < model.nStates; s++) {
    if (model.start[s] > 0) b.setStart(s, model.start[s]);
    if (model.terminal[s]) {
      b.setTerminal(s);
      continue;
    }
    for (let a = 0; a < model.nActions; a++) emit(b, s, a, s * model.nActions + a);
  }
  return b.build();
}

/**
 * Episodic (gamma = 1) random MDPs where every policy is proper: each pair's outcomes (1..3, as
 * randomMdp) share probability 1 - e with one outcome into the terminal state nS - 1, e >= 1/8.
 */
export function properEpisodic(states: [number, number], det: boolean): fc.Arbitrary<{ model: FiniteModel; reward: Float64Array }> {
  return randomMdp({ states, actions: [1, 4], gamma: [1, 1], deterministic: det }).chain(({ model, reward }) =>
    fc.array(fc.integer({ min: 1, max: 7 }), { minLength: model.nStates * model.nActions, maxLength: model.nStates * model.nActions }).map((exitWeights) => {
      const exit = model.nStates;
      const m = rebuildModel(model, { name: "episodic", nStates: model.nStates + 1, gamma: 1 }, (b, s, a, k) => {
        const e = exitWeights[k] / 8;
        for (let o = model.saStart[k]; o < model.saStart[k + 1]; o++) b.addOutcome(s, a, model.next[o], (1 - e) * model.prob[o], [reward[o]]);
        b.addOutcome(s, a, exit, e, [-0.5]);
      });
      return { model: m, reward: Float64Array.from(m.featureValues) };
    }),
  );
}
