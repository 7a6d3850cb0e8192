import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { checkPotentialShaping, checkRewardDifference, type ShapingConstraint } from "../../src/audit/shaping.js";
import { ModelBuilder } from "../../src/model/builder.js";
import { designerReward } from "../../src/model/reward.js";
import type { FiniteModel, RewardVariant } from "../../src/model/types.js";
import { evaluatePolicy } from "../../src/solve/evaluation.js";
import { deterministicPolicy, startValue } from "../../src/solve/policy.js";
import { valueIteration } from "../../src/solve/value-iteration.js";
import { createRng } from "../../src/rng/rng.js";

/**
 * A random small model: 2..6 non-terminal states, 1..2 terminals, 2..3 actions, 1..3 outcomes per pair.
 * With `properMin`, every pair also reaches terminal state nNon with that probability (all policies proper).
 */
function randomModel(seed: number, gamma: number, properMin = 0): FiniteModel {
  const rng = createRng(seed);
  const nNon = 2 + rng.int(5);
  const nTerm = 1 + rng.int(2);
  const nS = nNon + nTerm;
  const nA = 2 + rng.int(2);
  const b = new ModelBuilder({ name: `rand${seed}`, nStates: nS, actions: Array.from({ length: nA }, (_, a) => `a${a}`), features: ["x", "y"], gamma, horizon: 100 });
  for (let s = 0; s < nNon; s++) {
    for (let a = 0; a < nA; a++) {
      const k = 1 + rng.int(3);
      const raw = Array.from({ length: k }, () => 0.1 + rng.float());
      const tot = raw.reduce((x, y) => x + y, 0);
      for (let i = 0; i < k; i++) {
        b.addOutcome(s, a, rng.int(nS), ((1 - properMin) * raw[i]) / tot, [rng.float() * 2 - 1, rng.float() * 2 - 1], rng.float() * 2 - 1);
      }
      if (properMin > 0) b.addOutcome(s, a, nNon, properMin, [rng.float(), 0], rng.float());
    }
  }
  for (let t = nNon; t < nS; t++) b.setTerminal(t);
  b.setStart(0, 1);
  return b.build();
}

function randomPhi(seed: number, n: number): number[] {
  const rng = createRng(`phi${seed}`);
  return Array.from({ length: n }, () => Math.round((rng.float() * 10 - 5) * 1000) / 1000);
}

/** Actions within `tol` of the best, per non-terminal state. */
function optimalSets(model: FiniteModel, q: Float64Array, tol: number): number[][] {
  const nA = model.nActions;
  const out: number[][] = [];
  for (let s = 0; s < model.nStates; s++) {
    if (model.terminal[s]) continue;
    let best = -Infinity;
    for (let a = 0; a < nA; a++) best = Math.max(best, q[s * nA + a]);
    const set: number[] = [];
    for (let a = 0; a < nA; a++) if (q[s * nA + a] >= best - tol) set.push(a);
    out.push(set);
  }
  return out;
}

/** Smallest gap between the best and second-best action value over non-terminal states. */
function minGap(model: FiniteModel, q: Float64Array): number {
  const nA = model.nActions;
  let gap = Infinity;
  for (let s = 0; s < model.nStates; s++) {
    if (model.terminal[s]) continue;
    const row = Array.from(q.subarray(s * nA, (s + 1) * nA)).sort((a, b) => b - a);
    gap = Math.min(gap, row[0] - row[1]);
  }
  return gap;
}

function stateOf(model: FiniteModel, o: number): number {
  let k = 0;
  while (model.saStart[k + 1] <= o) k++;
  return Math.floor(k / model.nActions);
}

/** Phi at the head of a determining chain, recomputed from the chain alone (independent of the checker). */
function phiFromChain(model: FiniteModel, chain: ShapingConstraint[], gamma: number): number {
  if (chain.length === 0) return 0;
  const last = chain[chain.length - 1];
  let phiEnd: number;
  let endIdx = chain.length;
  if (model.terminal[last.next]) phiEnd = 0;
  else {
    // Closed loop: chain[j..] returns to chain[j].state. Phi(c_j) = -sum gamma^i F_i / (1 - gamma^L).
    const j = chain.findIndex((c) => c.state === last.next);
    expect(j).toBeGreaterThanOrEqual(0);
    let acc = 0;
    let g = 1;
    for (let i = j; i < chain.length; i++) {
      acc += g * chain[i].f;
      g *= gamma;
    }
    phiEnd = -acc / (1 - g);
    endIdx = j;
  }
  let phi = phiEnd;
  for (let i = endIdx - 1; i >= 0; i--) phi = gamma * phi - chain[i].f;
  return phi;
}

describe("potential-based shaping preserves optimal policies (Ng, Harada & Russell 1999, Theorem 1, Corollary 2)", () => {
  for (const [gamma, properMin] of [
    [0.5, 0],
    [0.9, 0],
    [0.95, 0],
    [1, 0.3],
  ] as const) {
    it(`random models, gamma = ${gamma}: same optimal action sets and intent, V*_{M'} = V*_M - Phi, check recovers Phi`, () => {
      let compared = 0;
      fc.assert(
        fc.property(fc.integer({ min: 1, max: 1_000_000 }), fc.double({ min: 0.2, max: 3, noNaN: true }), (seed, scale) => {
          const model = randomModel(seed, gamma, properMin);
          const phi = randomPhi(seed, model.nStates);
          const base: RewardVariant = { name: "base", weights: { x: 1, y: 0.5 } };
          const shaped: RewardVariant = { ...base, name: "shaped", shaping: { potential: phi, scale } };
          const r = designerReward(model, base);
          const r2 = designerReward(model, shaped);
          const opts = { tol: 1e-12 };
          const m = valueIteration(model, r, opts);
          const m2 = valueIteration(model, r2, opts);
          // Corollary 2: V*_{M'}(s) = V*_M(s) - Phi(s) on non-terminal states (Phi(terminal) = 0).
          for (let s = 0; s < model.nStates; s++) {
            const expected = model.terminal[s] ? m.values[s] : m.values[s] - scale * phi[s];
            expect(Math.abs(m2.values[s] - expected)).toBeLessThan(1e-7);
          }
          // Theorem 1: identical optimal action sets (Q' = Q - Phi(s) shifts a whole row).
          expect(optimalSets(model, m2.q, 1e-7)).toEqual(optimalSets(model, m.q, 1e-7));
          // Sufficiency: the M'-optimal policy is optimal in M, and has the same intent value.
          const pi2 = deterministicPolicy(model, m2.policy);
          const vIn = evaluatePolicy(model, r, pi2, opts).values;
          expect(Math.abs(startValue(model, vIn) - startValue(model, m.values))).toBeLessThan(1e-7);
          if (minGap(model, m.q) > 1e-6) {
            const i1 = startValue(model, evaluatePolicy(model, model.intent, deterministicPolicy(model, m.policy), opts).values);
            const i2 = startValue(model, evaluatePolicy(model, model.intent, pi2, opts).values);
            expect(Math.abs(i1 - i2)).toBeLessThan(1e-7);
            compared++;
          }
          // The checker recognizes F = R' - R as potential-based and recovers scale * Phi.
          const chk = checkRewardDifference(model, r2, r, { gamma });
          expect(chk.potentialBased).toBe(true);
          if (chk.potentialBased) {
            expect(chk.freeComponents).toBe(0);
            for (let s = 0; s < model.nStates; s++) {
              expect(Math.abs(chk.phi[s] - (model.terminal[s] ? 0 : scale * phi[s]))).toBeLessThan(1e-7);
            }
          }
        }),
        { numRuns: 150 },
      );
      // The intent comparison must actually have run on most models.
      expect(compared).toBeGreaterThan(100);
    });
  }

  it("Remark 2: if the reward itself is gamma Phi(s') - Phi(s), every policy is optimal", () => {
    const model = randomModel(7, 0.9);
    const phi = randomPhi(7, model.nStates);
    const r = designerReward(model, { name: "pure", weights: {}, shaping: { potential: phi, scale: 1 } });
    const sol = valueIteration(model, r, { tol: 1e-12 });
    for (const set of optimalSets(model, sol.q, 1e-8)) expect(set.length).toBe(model.nActions);
  });
});

describe("non-potential shaping is flagged with a witness that can be checked independently", () => {
  for (const gamma of [0.8, 1]) {
    it(`random models, gamma = ${gamma}: a bump on one outcome is flagged or absorbed into a new Phi`, () => {
      let flagged = 0;
      fc.assert(
        fc.property(fc.integer({ min: 1, max: 1_000_000 }), fc.double({ min: 0.5, max: 2, noNaN: true }), (seed, bump) => {
          const model = randomModel(seed, gamma, gamma === 1 ? 0.3 : 0);
          const phi = randomPhi(seed, model.nStates);
          const F = designerReward(model, { name: "f", weights: {}, shaping: { potential: phi, scale: 1 } });
          // Bump one outcome of a non-terminal state with positive probability.
          const candidates: number[] = [];
          for (let o = 0; o < F.length; o++) if (!model.terminal[stateOf(model, o)] && model.prob[o] > 0) candidates.push(o);
          const o = candidates[seed % candidates.length];
          F[o] += bump;
          const chk = checkPotentialShaping(model, F, { gamma });
          if (chk.potentialBased) {
            // Absorbed: the returned Phi must reproduce F on every constraint.
            for (let q = 0; q < F.length; q++) {
              const s = stateOf(model, q);
              if (model.terminal[s] || !(model.prob[q] > 0)) continue;
              expect(Math.abs(F[q] - (gamma * chk.phi[model.next[q]] - chk.phi[s]))).toBeLessThan(1e-7);
            }
            return;
          }
          flagged++;
          const e = chk.edge;
          expect(stateOf(model, e.outcome)).toBe(e.state);
          expect(model.next[e.outcome]).toBe(e.next);
          expect(Math.abs(chk.residual)).toBeGreaterThan(chk.tol);
          const w = chk.witness;
          if (w.kind === "cycle") {
            expect(gamma).toBe(1);
            const steps = w.steps;
            let sum = 0;
            for (let i = 0; i < steps.length; i++) {
              const st = steps[i];
              expect(st.to).toBe(steps[(i + 1) % steps.length].from);
              if (st.outcome < 0) {
                expect(model.terminal[st.from] && model.terminal[st.to]).toBe(1);
                continue;
              }
              const [src, dst] = st.forward ? [st.from, st.to] : [st.to, st.from];
              expect(stateOf(model, st.outcome)).toBe(src);
              expect(model.next[st.outcome]).toBe(dst);
              sum += st.forward ? F[st.outcome] : -F[st.outcome];
            }
            expect(Math.abs(sum - w.sum)).toBeLessThan(1e-9);
            expect(Math.abs(sum - chk.residual)).toBeLessThan(1e-7);
            expect(Math.abs(sum)).toBeGreaterThan(chk.tol);
            if (chk.loop) {
              // A directed loop of real outcomes with the reported non-zero F sum.
              const L = chk.loop.states.length;
              let lapSum = 0;
              for (let i = 0; i < L; i++) {
                const q = chk.loop.outcomes[i];
                expect(stateOf(model, q)).toBe(chk.loop.states[i]);
                expect(model.next[q]).toBe(chk.loop.states[(i + 1) % L]);
                expect(model.prob[q]).toBeGreaterThan(0);
                lapSum += F[q];
              }
              expect(Math.abs(lapSum - chk.loop.sum)).toBeLessThan(1e-9);
              expect(Math.abs(lapSum)).toBeGreaterThan(chk.tol);
            }
          } else {
            expect(gamma).toBeLessThan(1);
            const a = phiFromChain(model, w.chainFromState, gamma);
            const b = gamma * phiFromChain(model, w.chainFromNext, gamma) - F[e.outcome];
            expect(Math.abs(a - w.phiFromChain)).toBeLessThan(1e-7);
            expect(Math.abs(b - w.phiFromEdge)).toBeLessThan(1e-7);
            expect(Math.abs(a - b)).toBeGreaterThan(chk.tol);
          }
        }),
        { numRuns: 200 },
      );
      expect(flagged).toBeGreaterThan(100);
    });
  }
});

describe("a positive bonus around a 2-cycle (the loop the paper warns about)", () => {
  // Hand-built: states A = 0, B = 1, Goal = 2 (terminal). "finish" goes to Goal for 1 point and intent 1;
  // "switch" goes A <-> B for 0 points. The bonus pays +1 for each switch: not potential-based, since
  // the undiscounted F sum around A -> B -> A is 2, not 0 (Ng, Harada & Russell 1999, cycle argument).
  function twoCycle(gamma: number): FiniteModel {
    const b = new ModelBuilder({ name: "two-cycle", nStates: 3, actions: ["finish", "switch"], features: ["points", "bonus"], gamma, horizon: 100 });
    b.addOutcome(0, 0, 2, 1, [1, 0], 1);
    b.addOutcome(0, 1, 1, 1, [0, 1], 0);
    b.addOutcome(1, 0, 2, 1, [1, 0], 1);
    b.addOutcome(1, 1, 0, 1, [0, 1], 0);
    b.setTerminal(2).setStart(0, 1);
    return b.build();
  }
  const base: RewardVariant = { name: "points", weights: { points: 1 } };
  const bonus: RewardVariant = { name: "points+bonus", weights: { points: 1, bonus: 1 } };

  it("gamma = 1: flagged with a constraint cycle through the goal and the directed loop A -> B -> A, F sum 2", () => {
    const m = twoCycle(1);
    const chk = checkRewardDifference(m, designerReward(m, bonus), designerReward(m, base));
    expect(chk.potentialBased).toBe(false);
    if (chk.potentialBased || chk.witness.kind !== "cycle") throw new Error("expected a cycle witness");
    // Hand-computed: the finish edges force Phi(A) = Phi(B) = 0, so the switch A -> B (F = 1) is off by 1;
    // the constraint cycle A -switch-> B -finish-> Goal <-finish- A sums to 1 + 0 - 0 = 1.
    expect(chk.residual).toBe(1);
    expect(chk.witness.sum).toBe(1);
    expect(chk.witness.directed).toBe(false);
    expect(chk.loop).toBeDefined();
    expect(chk.loop!.sum).toBe(2);
    expect(chk.loop!.mean).toBe(1);
    expect([...chk.loop!.states].sort()).toEqual([0, 1]);
    for (const o of chk.loop!.outcomes) expect(m.featureValues[o * 2 + 1]).toBe(1);
  });

  it("gamma = 1: a residual without any directed loop (two exits that disagree) has no loop", () => {
    // One state, two actions to the terminal with bonus 0 and 1: Phi(s) = 0 and Phi(s) = -1 disagree.
    const b = new ModelBuilder({ name: "fork", nStates: 2, actions: ["l", "r"], features: ["bonus"], gamma: 1, horizon: 5 });
    b.addOutcome(0, 0, 1, 1, [0]).addOutcome(0, 1, 1, 1, [1]).setTerminal(1).setStart(0, 1);
    const m = b.build();
    const chk = checkPotentialShaping(m, designerReward(m, { name: "b", weights: { bonus: 1 } }));
    expect(chk.potentialBased).toBe(false);
    if (!chk.potentialBased) {
      expect(chk.loop).toBeUndefined();
      expect(chk.witness.kind === "cycle" && Math.abs(chk.witness.sum)).toBe(1);
    }
  });

  it("gamma = 0.9: flagged, and it changes the optimal policy (looping is worth 1/(1 - 0.9) = 10 > 1)", () => {
    const m = twoCycle(0.9);
    const r = designerReward(m, base);
    const r2 = designerReward(m, bonus);
    const chk = checkRewardDifference(m, r2, r);
    expect(chk.potentialBased).toBe(false);
    if (!chk.potentialBased) {
      // Hand-computed: A's determining constraint (finish, F = 0) gives Phi(A) = 0.9 * 0 - 0 = 0, and the same
      // for B; the switch A -> B (F = 1) then forces Phi(A) = 0.9 * Phi(B) - 1 = -1. Residual 1.
      if (chk.witness.kind !== "conflict") throw new Error("expected a conflict witness");
      expect(chk.residual).toBe(1);
      expect(chk.witness.phiFromChain).toBe(0);
      expect(chk.witness.phiFromEdge).toBe(-1);
      expect(chk.witness.chainFromState.map((c) => c.action)).toEqual([0]);
    }
    const a = valueIteration(m, r, { tol: 1e-12 });
    const b = valueIteration(m, r2, { tol: 1e-12 });
    expect(Array.from(a.policy)).toEqual([0, 0, -1]);
    expect(Array.from(b.policy)).toEqual([1, 1, -1]);
    expect(b.values[0]).toBeCloseTo(10, 8);
    const intent = (pol: Int32Array) => startValue(m, evaluatePolicy(m, m.intent, deterministicPolicy(m, pol), { tol: 1e-12 }).values);
    expect(intent(a.policy)).toBe(1);
    expect(intent(b.policy)).toBe(0);
  });

  it("gamma = 1: a closed loop that never reaches a terminal gets Phi up to a constant (freeComponents = 1)", () => {
    // States 0 <-> 1 loop forever, 2 is a terminal nobody reaches. Phi = (3, 5) gives F(0->1) = 2, F(1->0) = -2.
    const b = new ModelBuilder({ name: "closed", nStates: 3, actions: ["go"], features: ["f"], gamma: 1, horizon: 5 });
    b.addOutcome(0, 0, 1, 1, [2]).addOutcome(1, 0, 0, 1, [-2]).setTerminal(2).setStart(0, 1);
    const m = b.build();
    const chk = checkPotentialShaping(m, designerReward(m, { name: "f", weights: { f: 1 } }));
    expect(chk.potentialBased).toBe(true);
    if (chk.potentialBased) {
      expect(chk.freeComponents).toBe(1);
      expect(chk.phi[1] - chk.phi[0]).toBe(2);
    }
  });

  it("the same bonus written as a potential (Phi(A) = 0, Phi(B) = 1) is accepted at gamma = 1", () => {
    // F(A->B) = 1, F(B->A) = -1, F(.->Goal) = -Phi(s): the cycle sums to 0.
    const m = twoCycle(1);
    const F = designerReward(m, { name: "phi", weights: {}, shaping: { potential: [0, 1, 0], scale: 1 } });
    const chk = checkPotentialShaping(m, F);
    expect(chk.potentialBased).toBe(true);
    if (chk.potentialBased) expect(Array.from(chk.phi)).toEqual([0, 1, 0]);
  });
});
