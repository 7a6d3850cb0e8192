/** Property tests: ε-greedy selection probabilities, schedule invariants, determinism, loop equivalence. */
import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { createRng, Xorshift32 } from "../../src/rng/rng.js";
import { TWO32, epsilonGreedy, greedyProbability } from "../../policies/selection.js";
import { scheduleValue, type Schedule } from "../../policies/schedules.js";
import { learners, train, type LearnerName } from "../../policies/index.js";
import { ModelBuilder } from "../../src/model/builder.js";
import { cliffModel, envOf, opaqueEnv, windyModel } from "./textbook-models.js";

describe("ε-greedy (Sutton & Barto 2018, section 2.3: greedy with probability 1 − ε + ε/|A|)", () => {
  it("picks the greedy action at the expected rate (within 5 standard errors)", () => {
    fc.assert(
      fc.property(fc.double({ min: 0, max: 1, noNaN: true }), fc.integer({ min: 1, max: 9 }), fc.integer({ min: 0, max: 8 }), fc.integer({ min: 1, max: 1e9 }), (eps, nA, g, seed) => {
        const greedy = g % nA;
        const q = new Float64Array(nA);
        q[greedy] = 1;
        const rng = createRng(seed);
        const N = 4000;
        let hits = 0;
        for (let i = 0; i < N; i++) if (epsilonGreedy(q, 0, nA, eps * TWO32, rng) === greedy) hits++;
        const p = greedyProbability(eps, nA);
        expect(Math.abs(hits / N - p)).toBeLessThanOrEqual(5 * Math.sqrt((p * (1 - p)) / N) + 1e-9);
      }),
      { seed: 7, numRuns: 40 },
    );
  });

  it("breaks ties to the lowest index and uses one draw when exploiting, two when exploring", () => {
    const q = new Float64Array([0, 2, 2, 1]);
    const a = new Xorshift32(2654435769);
    const b = new Xorshift32(2654435769);
    for (let i = 0; i < 1000; i++) {
      const act = epsilonGreedy(q, 0, 4, 0.1 * TWO32, a);
      const u1 = b.uint32();
      if (u1 < 429496730) expect(act).toBe(b.uint32() >>> 30); // bench PROBLEM.md section 5
      else expect(act).toBe(1);
    }
  });
});

const arbSchedule: fc.Arbitrary<Schedule> = fc.oneof(
  fc.record({ kind: fc.constant("constant" as const), value: fc.double({ min: 0, max: 1, noNaN: true }) }),
  fc.record({ kind: fc.constant("linear" as const), start: fc.double({ min: 0, max: 1, noNaN: true }), end: fc.double({ min: 0, max: 1, noNaN: true }), steps: fc.integer({ min: 1, max: 1e6 }) }),
  fc.record({ kind: fc.constant("exponential" as const), start: fc.double({ min: 0, max: 1, noNaN: true }), end: fc.double({ min: 0, max: 1, noNaN: true }), decay: fc.double({ min: 0.5, max: 1, noNaN: true }) }),
  fc.record({ kind: fc.constant("inverse" as const), start: fc.double({ min: 0.01, max: 1, noNaN: true }), scale: fc.double({ min: 0.1, max: 1e4, noNaN: true }), power: fc.double({ min: 0.5, max: 1, noNaN: true }) }),
);

describe("schedules", () => {
  it("are monotone in n and stay within their bounds", () => {
    fc.assert(
      fc.property(arbSchedule, fc.integer({ min: 0, max: 1e6 }), fc.integer({ min: 0, max: 1e6 }), (s, n1, n2) => {
        const [lo, hi] = n1 <= n2 ? [n1, n2] : [n2, n1];
        const a = scheduleValue(s, lo);
        const b = scheduleValue(s, hi);
        const first = scheduleValue(s, 0);
        const last = s.kind === "constant" ? s.value : s.kind === "inverse" ? 0 : s.end;
        const [min, max] = [Math.min(first, last), Math.max(first, last)];
        for (const v of [a, b]) {
          expect(v).toBeGreaterThanOrEqual(min - 1e-12);
          expect(v).toBeLessThanOrEqual(max + 1e-12);
        }
        if (first >= last) expect(b).toBeLessThanOrEqual(a + 1e-12);
        else expect(b).toBeGreaterThanOrEqual(a - 1e-12);
      }),
      { seed: 11, numRuns: 300 },
    );
  });

  it("inverse with start 1, scale 1, power 1 is the sample-average step 1/(n+1) (S&B 2018, eq. 2.3)", () => {
    for (let n = 0; n < 10; n++) expect(scheduleValue({ kind: "inverse", start: 1, scale: 1, power: 1 }, n)).toBeCloseTo(1 / (n + 1), 15);
  });
});

describe("determinism", () => {
  const names = Object.keys(learners) as LearnerName[];
  for (const learner of names) {
    it(`${learner}: same seed -> identical Q table, different seed -> different`, () => {
      const m = cliffModel();
      const extra = learner === "linear-sarsa" ? { features: "one-hot" as const } : {};
      const run = (seed: number) => train(envOf(m), { learner, alpha: 0.5, gamma: 1, epsilon: 0.1, ...extra } as never, { steps: 5000, rng: createRng(seed) }).agent.qValues!();
      expect(Array.from(run(3))).toEqual(Array.from(run(3)));
      expect(Array.from(run(3))).not.toEqual(Array.from(run(4)));
    });
  }

  it("q-learning's fast path over a stochastic view equals the generic loop exactly", () => {
    // a slippery variant of the windy grid: each move goes as intended w.p. 0.8, else stays put
    const w = windyModel();
    const b = new ModelBuilder({ name: "slippery", nStates: w.nStates, actions: w.actions, features: ["reward"], gamma: 1, horizon: 200 });
    for (let s = 0; s < w.nStates; s++) {
      if (w.terminal[s]) {
        b.setTerminal(s);
        continue;
      }
      for (let a = 0; a < 4; a++) {
        const nx = w.next[w.saStart[s * 4 + a]];
        if (nx === s) b.addOutcome(s, a, s, 1, [-1]);
        else b.addOutcome(s, a, nx, 0.8, [-1]).addOutcome(s, a, s, 0.2, [-1]);
      }
    }
    b.setStart(30, 1);
    const m = b.build();
    const go = (fast: boolean) =>
      train(fast ? envOf(m) : opaqueEnv(envOf(m)), { learner: "q-learning" }, { steps: 20000, rng: createRng(8) });
    const f = go(true);
    const g = go(false);
    expect(Array.from(f.agent.qValues!())).toEqual(Array.from(g.agent.qValues!()));
    expect(f.stats).toEqual(g.stats);
  });

  it("stops early on \"stop\", on signal.aborted and at maxEpisodes", () => {
    const env = envOf(cliffModel());
    const stop = train(env, { learner: "q-learning" }, { steps: 100000, rng: createRng(1), checkpointEvery: 1000, onCheckpoint: (s) => (s >= 3000 ? "stop" : undefined) });
    expect(stop.stats.steps).toBe(3000);
    expect(stop.stopped).toBe(true);
    const signal = { aborted: false };
    const ab = train(env, { learner: "sarsa" }, { steps: 100000, rng: createRng(1), checkpointEvery: 500, signal, onCheckpoint: (s) => { if (s === 1500) signal.aborted = true; } });
    expect(ab.stats.steps).toBe(1500);
    const ep = train(env, { learner: "double-q" }, { steps: 100000, rng: createRng(1), maxEpisodes: 7 });
    expect(ep.episodes).toBe(7);
  });
});
