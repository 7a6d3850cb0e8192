import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { failureProbability, indifferenceProbability, prefersRisk, riskAudit } from "../../src/audit/indifference.js";
import { ModelBuilder } from "../../src/model/builder.js";
import { designerReward } from "../../src/model/reward.js";
import { deterministicPolicy } from "../../src/solve/policy.js";
import { InputError } from "../../src/errors.js";

describe("indifferenceProbability: hand-computed lotteries (expected value of a two-outcome lottery)", () => {
  it("hand-computed: ok 10, fail -90, safe 5 -> p* = (10 - 5) / (10 + 90) = 0.05", () => {
    const r = indifferenceProbability({ ok: 10, fail: -90, safe: 5 });
    expect(r.pStar).toBeCloseTo(0.05, 15);
    expect(r.kind).toBe("threshold");
    // At p = 0.04: 0.96 * 10 - 0.04 * 90 = 6 > 5; at p = 0.06: 9.4 - 5.4 = 4 < 5.
    expect(prefersRisk({ ok: 10, fail: -90, safe: 5 }, 0.04)).toBe(true);
    expect(prefersRisk({ ok: 10, fail: -90, safe: 5 }, 0.06)).toBe(false);
  });

  it("hand-computed: ok 1, fail 0, safe 0.75 -> p* = 0.25; ok 3, fail -1, safe 2 -> p* = 1/4", () => {
    expect(indifferenceProbability({ ok: 1, fail: 0, safe: 0.75 }).pStar).toBe(0.25);
    expect(indifferenceProbability({ ok: 3, fail: -1, safe: 2 }).pStar).toBe(0.25);
  });

  it("safe >= ok: the risk is never taken (p* <= 0, clipped to 0)", () => {
    // Hand-computed: (5 - 5) / 10 = 0 and (5 - 7) / 10 = -0.2.
    expect(indifferenceProbability({ ok: 5, fail: -5, safe: 5 })).toEqual({ pStar: 0, clipped: 0, kind: "never" });
    const r = indifferenceProbability({ ok: 5, fail: -5, safe: 7 });
    expect(r.pStar).toBeCloseTo(-0.2, 15);
    expect(r.clipped).toBe(0);
    expect(r.kind).toBe("never");
    expect(prefersRisk({ ok: 5, fail: -5, safe: 5 }, 0)).toBe(false);
  });

  it("safe < fail: the risk is always taken (p* > 1, clipped to 1); safe == fail gives p* = 1", () => {
    // Hand-computed: (5 - 1) / (5 - 2) = 4/3.
    const r = indifferenceProbability({ ok: 5, fail: 2, safe: 1 });
    expect(r.pStar).toBeCloseTo(4 / 3, 15);
    expect(r.clipped).toBe(1);
    expect(r.kind).toBe("always");
    expect(indifferenceProbability({ ok: 5, fail: 1, safe: 1 })).toEqual({ pStar: 1, clipped: 1, kind: "threshold" });
  });

  it("ok == fail: p* undefined; the choice does not depend on p", () => {
    const a = indifferenceProbability({ ok: 3, fail: 3, safe: 2 });
    expect(a.pStar).toBeNaN();
    expect(a.kind).toBe("always");
    expect(indifferenceProbability({ ok: 3, fail: 3, safe: 4 }).kind).toBe("never");
    expect(indifferenceProbability({ ok: 3, fail: 3, safe: 3 }).kind).toBe("indifferent");
  });

  it("ok < fail (the reward pays for failing): risky preferred above p*", () => {
    // Hand-computed: (0 - 4) / (0 - 10) = 0.4; at p = 0.5 the lottery is worth 5 > 4, at 0.3 it is 3 < 4.
    const l = { ok: 0, fail: 10, safe: 4 };
    const r = indifferenceProbability(l);
    expect(r.pStar).toBeCloseTo(0.4, 15);
    expect(r.kind).toBe("inverted");
    expect(prefersRisk(l, 0.5)).toBe(true);
    expect(prefersRisk(l, 0.3)).toBe(false);
  });

  it("rejects non-finite returns", () => {
    expect(() => indifferenceProbability({ ok: NaN, fail: 0, safe: 0 })).toThrow(InputError);
  });

  it("property: the kind agrees with the expected-value comparison on either side of p*", () => {
    const v = fc.integer({ min: -100, max: 100 });
    fc.assert(
      fc.property(v, v, v, fc.double({ min: 0, max: 1, noNaN: true }), (ok, fail, safe, p) => {
        const l = { ok, fail, safe };
        const r = indifferenceProbability(l);
        const risky = prefersRisk(l, p);
        const margin = 1e-9;
        switch (r.kind) {
          case "never":
            expect(risky).toBe(false);
            break;
          case "always":
            // Strictly preferred on the open interval (the end point equal to p* may tie).
            if (p > margin && p < 1 - margin) expect(risky).toBe(true);
            break;
          case "threshold":
            if (p < r.pStar - margin) expect(risky).toBe(true);
            if (p > r.pStar + margin) expect(risky).toBe(false);
            break;
          case "inverted":
            if (p > r.pStar + margin) expect(risky).toBe(true);
            if (p < r.pStar - margin) expect(risky).toBe(false);
            break;
          case "indifferent":
            expect(risky).toBe(false);
            break;
        }
      }),
      { numRuns: 2000 },
    );
  });
});

describe("riskAudit on a hand-built model (hand-computed)", () => {
  // States: 0 start, 1 ridge, 2 summit (terminal), 3 fall (terminal, catastrophic), 4 camp (terminal).
  // "climb": start -> ridge 0.8 (+1) / fall 0.2 (-10); ridge -> summit 0.75 (+10) / fall 0.25 (-10).
  // "rest": start -> camp (+campReward); ridge -> summit (+2). gamma = 0.9.
  function model(campReward: number) {
    const b = new ModelBuilder({ name: "ridge", nStates: 5, actions: ["climb", "rest"], features: ["pts"], gamma: 0.9, horizon: 10 });
    b.addOutcome(0, 0, 1, 0.8, [1]).addOutcome(0, 0, 3, 0.2, [-10]);
    b.addOutcome(1, 0, 2, 0.75, [10]).addOutcome(1, 0, 3, 0.25, [-10]);
    b.addOutcome(0, 1, 4, 1, [campReward]);
    b.addOutcome(1, 1, 2, 1, [2]);
    b.setTerminal(2).setTerminal(3).setTerminal(4).setStart(0, 1);
    return b.build();
  }

  it("hand-computed: fail 0.4, E[G|fail] = -9, E[G|ok] = 10, safe 3, p* = 7/19; the reward prefers safety", () => {
    // Paths under "climb": fall at once (p 0.2, G = -10); ridge then summit (p 0.6, G = 1 + 0.9 * 10 = 10);
    // ridge then fall (p 0.2, G = 1 - 9 = -8). P(fail) = 0.4; E[G|fail] = (0.2 * -10 + 0.2 * -8) / 0.4 = -9;
    // E[G|ok] = 10; overall 2.4. Safe ("rest" from start): 3. p* = (10 - 3) / (10 + 9) = 7/19.
    const m = model(3);
    const reward = designerReward(m, { name: "pts", weights: { pts: 1 } });
    const risky = deterministicPolicy(m, Int32Array.from([0, 0, -1, -1, -1]));
    const safe = deterministicPolicy(m, Int32Array.from([1, 1, -1, -1, -1]));
    const r = riskAudit(m, { reward, risky, safe, catastrophic: [3] });
    expect(r.failProb).toBeCloseTo(0.4, 12);
    expect(r.safeFailProb).toBe(0);
    expect(r.riskyReturn).toBeCloseTo(2.4, 12);
    expect(r.failReturn).toBeCloseTo(-9, 12);
    expect(r.okReturn).toBeCloseTo(10, 12);
    expect(r.safeReturn).toBeCloseTo(3, 12);
    expect(r.indifference!.pStar).toBeCloseTo(7 / 19, 12);
    expect(r.indifference!.kind).toBe("threshold");
    expect(r.margin).toBeCloseTo(0.4 / (7 / 19), 12);
    expect(r.margin).toBeGreaterThan(1);
  });

  it("hand-computed: with camp worth 2, p* = 8/19 > 0.4 and the reward prefers the risk (2.4 > 2)", () => {
    const m = model(2);
    const reward = designerReward(m, { name: "pts", weights: { pts: 1 } });
    const r = riskAudit(m, {
      reward,
      risky: deterministicPolicy(m, Int32Array.from([0, 0, -1, -1, -1])),
      safe: deterministicPolicy(m, Int32Array.from([1, 1, -1, -1, -1])),
      catastrophic: Uint8Array.from([0, 0, 0, 1, 0]),
    });
    expect(r.indifference!.pStar).toBeCloseTo(8 / 19, 12);
    expect(r.margin).toBeLessThan(1);
    expect(r.riskyReturn).toBeGreaterThan(r.safeReturn);
  });

  it("failureProbability per state, and a stochastic policy (hand-computed)", () => {
    // Climb with probability 1/2 everywhere: from ridge 0.5 * 0.25 = 0.125; from start 0.5 * (0.2 + 0.8 * 0.125) = 0.15.
    const m = model(3);
    const half = new Float64Array(m.nStates * 2).fill(0.5);
    const h = failureProbability(m, half, [3]);
    expect(h[1]).toBeCloseTo(0.125, 12);
    expect(h[0]).toBeCloseTo(0.15, 12);
    expect(h[3]).toBe(1);
    expect(h[2]).toBe(0);
  });

  it("rejects a catastrophic state that is not terminal", () => {
    const m = model(3);
    const reward = designerReward(m, { name: "pts", weights: { pts: 1 } });
    const p = deterministicPolicy(m, Int32Array.from([0, 0, -1, -1, -1]));
    expect(() => riskAudit(m, { reward, risky: p, safe: p, catastrophic: [1] })).toThrow(InputError);
    expect(() => riskAudit(m, { reward, risky: p, safe: p, catastrophic: [9] })).toThrow(InputError);
  });

  it("a risky policy that never fails has no indifference point", () => {
    const m = model(3);
    const reward = designerReward(m, { name: "pts", weights: { pts: 1 } });
    const safe = deterministicPolicy(m, Int32Array.from([1, 1, -1, -1, -1]));
    const r = riskAudit(m, { reward, risky: safe, safe, catastrophic: [3] });
    expect(r.failProb).toBe(0);
    expect(r.indifference).toBeNull();
  });
});
