/**
 * The fixed-point policy evaluator (`evaluatePolicy` with `accuracy`, src/solve/evaluation.ts) against an
 * independent method: v_pi = (I - gamma P_pi)^{-1} r_pi solved directly by Gaussian elimination with
 * partial pivoting on the dense matrix built here from the model's outcomes (Puterman 1994,
 * Theorem 6.1.1 and eq. 6.1.7, from memory; Golub & Van Loan 2013, Algorithm 3.4.1, from memory).
 */
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { ModelBuilder } from "../../src/model/builder.js";
import { example41 } from "../helpers/example41.js";
import { randomMdp } from "../helpers/random-mdp.js";
import type { FiniteModel } from "../../src/model/types.js";
import { evaluatePolicy, evaluatePolicyMany, FIXED_POINT_ACCURACY, policyChain } from "../../src/solve/evaluation.js";
import { uniformPolicy } from "../../src/solve/policy.js";
import type { Policy } from "../../src/solve/sweeps.js";

/** Dense direct solve of v = r_pi + gamma P_pi v (terminal states: v = 0), straight from the outcome lists. */
function directSolve(model: FiniteModel, reward: Float64Array, policy: Policy, gamma: number): Float64Array {
  const n = model.nStates;
  const nA = model.nActions;
  const A = Array.from({ length: n }, () => new Float64Array(n + 1));
  for (let s = 0; s < n; s++) {
    A[s][s] = 1;
    if (model.terminal[s]) continue;
    for (let a = 0; a < nA; a++) {
      const pa = policy[s * nA + a];
      for (let o = model.saStart[s * nA + a]; o < model.saStart[s * nA + a + 1]; o++) {
        A[s][n] += pa * model.prob[o] * reward[o];
        if (!model.terminal[model.next[o]]) A[s][model.next[o]] -= gamma * pa * model.prob[o];
      }
    }
  }
  for (let c = 0; c < n; c++) {
    let p = c;
    for (let r = c + 1; r < n; r++) if (Math.abs(A[r][c]) > Math.abs(A[p][c])) p = r;
    [A[c], A[p]] = [A[p], A[c]];
    for (let r = c + 1; r < n; r++) {
      const f = A[r][c] / A[c][c];
      if (f !== 0) for (let k = c; k <= n; k++) A[r][k] -= f * A[c][k];
    }
  }
  const v = new Float64Array(n);
  for (let r = n - 1; r >= 0; r--) {
    let acc = A[r][n];
    for (let k = r + 1; k < n; k++) acc -= A[r][k] * v[k];
    v[r] = acc / A[r][r];
  }
  return v;
}

const maxDiff = (a: Float64Array, b: Float64Array) => a.reduce((m, x, i) => Math.max(m, Math.abs(x - b[i])), 0);

/** W x H open grid, four moves (off-grid stays), reward -1 per step and +10 into the goal corner (terminal). */
function grid(W: number, H: number, gamma: number): { model: FiniteModel; reward: Float64Array } {
  const b = new ModelBuilder({ name: "grid", nStates: W * H, actions: ["up", "right", "down", "left"], features: ["r"], gamma, horizon: 1000 });
  const goal = W * H - 1;
  b.setTerminal(goal);
  for (let y = 0; y < H; y++) {
    for (let x = 0; x < W; x++) {
      const s = y * W + x;
      if (s === goal) continue;
      const moves = [
        [x, Math.max(0, y - 1)],
        [Math.min(W - 1, x + 1), y],
        [x, Math.min(H - 1, y + 1)],
        [Math.max(0, x - 1), y],
      ];
      moves.forEach(([nx, ny], a) => {
        const ns = ny * W + nx;
        b.addOutcome(s, a, ns, 1, [ns === goal ? 10 : -1]);
      });
    }
  }
  b.setStart(0, 1);
  const model = b.build();
  return { model, reward: Float64Array.from(model.featureValues) };
}

/** A directed ring of n cells: "go" moves one cell clockwise with probability 0.9 (else stays), "back" moves one cell back; reward 1 on entering cell 0. */
function ring(n: number, gamma: number): { model: FiniteModel; reward: Float64Array } {
  const b = new ModelBuilder({ name: "ring", nStates: n, actions: ["go", "back"], features: ["r"], gamma, horizon: 1000 });
  for (let s = 0; s < n; s++) {
    const fwd = (s + 1) % n;
    const bwd = (s + n - 1) % n;
    b.addOutcome(s, 0, fwd, 0.9, [fwd === 0 ? 1 : 0]);
    b.addOutcome(s, 0, s, 0.1, [s === 0 ? 1 : 0]);
    b.addOutcome(s, 1, bwd, 1, [bwd === 0 ? 1 : 0]);
  }
  b.setStart(0, 1);
  const model = b.build();
  return { model, reward: Float64Array.from(model.featureValues) };
}

describe("fixed-point policy evaluation (accuracy mode)", () => {
  it("a 20x20 grid random walk at gamma 0.99 (the over-relaxed path) is within the accuracy of the direct solve", () => {
    const { model, reward } = grid(20, 20, 0.99);
    const pi = uniformPolicy(model);
    const exact = directSolve(model, reward, pi, 0.99);
    const ev = evaluatePolicy(model, reward, pi, { accuracy: FIXED_POINT_ACCURACY });
    expect(ev.converged).toBe(true);
    expect(ev.errorBound).toBeLessThanOrEqual(FIXED_POINT_ACCURACY);
    expect(maxDiff(ev.values, exact)).toBeLessThanOrEqual(FIXED_POINT_ACCURACY);
    // ...and far fewer sweeps than the textbook iteration needs for a comparable stopping point. Sweep
    // counts are deterministic (no timing); the factor 3 is our own margin for what over-relaxation must
    // buy on a slowly mixing chain (Young's optimal SOR, from memory, promises far more than 3x here).
    const sync = evaluatePolicy(model, reward, pi, { tol: 1e-11 });
    expect(ev.iters).toBeLessThan(sync.iters / 3);
  });

  it("a directed ring with a biased policy (where over-relaxation diverges and falls back) is within the accuracy of the direct solve", () => {
    const { model, reward } = ring(64, 0.97);
    const pi = new Float64Array(64 * 2);
    for (let s = 0; s < 64; s++) {
      pi[s * 2] = 0.8;
      pi[s * 2 + 1] = 0.2;
    }
    const exact = directSolve(model, reward, pi, 0.97);
    const ev = evaluatePolicy(model, reward, pi, { accuracy: 1e-10 });
    expect(ev.converged).toBe(true);
    expect(ev.values.every(Number.isFinite)).toBe(true);
    expect(maxDiff(ev.values, exact)).toBeLessThanOrEqual(1e-10);
  });

  it("gamma = 1 has no contraction bound: accuracy means synchronous sweeps with tol = accuracy (Sutton & Barto 2018, Example 4.1)", () => {
    // Sutton & Barto 2018, Figure 4.1 (k = infinity): v_pi of the equiprobable policy on the 4x4 grid.
    const { model: m, reward } = example41();
    const ev = evaluatePolicy(m, reward, uniformPolicy(m), { accuracy: 1e-10 });
    expect(ev.errorBound).toBeUndefined();
    expect(Array.from(ev.values, (v) => Math.round(v * 1e6) / 1e6)).toEqual([0, -14, -20, -22, -14, -18, -20, -20, -20, -20, -18, -14, -22, -20, -14, 0]);
  });

  it("on random MDPs: within the accuracy of the direct solve, and the reported bound holds (fast-check)", () => {
    const arb = randomMdp({ states: [2, 12], actions: [1, 3], gamma: [0.3, 0.995], deterministic: false, maxWeight: 4, rewardRange: 5 }).chain((mdp) =>
      fc.record({ mdp: fc.constant(mdp), policy: fc.array(fc.integer({ min: 0, max: 3 }), { minLength: mdp.model.nStates * mdp.model.nActions, maxLength: mdp.model.nStates * mdp.model.nActions }) }),
    );
    fc.assert(
      fc.property(arb, ({ mdp, policy }) => {
        const { model: m, reward, gamma } = mdp;
        const nS = m.nStates;
        const nA = m.nActions;
        // A stochastic policy with some zero entries (rows normalized; an all-zero row becomes uniform).
        const pi = new Float64Array(nS * nA);
        for (let s = 0; s < nS; s++) {
          let t = 0;
          for (let a = 0; a < nA; a++) t += policy[s * nA + a];
          for (let a = 0; a < nA; a++) pi[s * nA + a] = t > 0 ? policy[s * nA + a] / t : 1 / nA;
        }
        const exact = directSolve(m, reward, pi, gamma);
        const [ev, evNeg] = evaluatePolicyMany(m, [reward, reward.map((x) => -x)], pi, { gamma, accuracy: 1e-9 });
        const scale = 1 + exact.reduce((mx, x) => Math.max(mx, Math.abs(x)), 0);
        expect(ev.converged).toBe(true);
        expect(ev.errorBound!).toBeLessThanOrEqual(1e-9);
        expect(maxDiff(ev.values, exact)).toBeLessThanOrEqual(1e-9 + 1e-13 * scale);
        expect(maxDiff(evNeg.values, exact.map((x) => -x))).toBeLessThanOrEqual(1e-9 + 1e-13 * scale);
        // The chain: rows of pi-weighted probabilities to live states sum to at most 1, no row lists a successor twice.
        const c = policyChain(m, pi);
        for (let i = 0; i < c.states.length; i++) {
          let sum = c.self[i];
          const seen = new Set<number>();
          for (let k = c.rowStart[i]; k < c.rowStart[i + 1]; k++) {
            sum += c.weight[k];
            expect(seen.has(c.col[k]) || c.col[k] === i).toBe(false);
            seen.add(c.col[k]);
          }
          expect(sum).toBeLessThanOrEqual(1 + 1e-12);
        }
      }),
      { numRuns: 200 },
    );
  });
});
