/**
 * Multi-threaded value iteration (src/solve/parallel.ts) against single-thread `valueIteration` and
 * against the shared benchmark's published test vectors.
 * Sources: /work/shared/bench/PROBLEM.md section 8 (CHECK lines of `vi 3 3`, `vi 7 5`, `vi 31 47`,
 * agreed by the C, JS and Python peer programs) and section 6 (analytic check iters = W + H - 1);
 * synchronous value iteration as in Sutton & Barto 2018, section 4.4. Equality is exact (Object.is
 * per entry): a Jacobi sweep's backups read only the previous V, so splitting states over threads
 * must not change a single bit.
 */
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { greedyRollout, viCheckLine } from "../../src/bench/check.js";
import { LAVA_GAMMA, lavaModel } from "../../src/bench/lava.js";
import { InputError } from "../../src/errors.js";
import { builtinScenarioNames, loadEnvSync } from "../../src/env/index.js";
import { designerReward } from "../../src/model/reward.js";
import { randomMdp } from "../helpers/random-mdp.js";
import type { Solution } from "../../src/solve/sweeps.js";
import { valueIteration } from "../../src/solve/value-iteration.js";
import { partition, prepareParallelSweeps, valueIterationParallel } from "../../src/solve/parallel.js";

function expectSame(par: Solution, ref: Solution): void {
  expect(par.iters).toBe(ref.iters);
  expect(par.converged).toBe(ref.converged);
  expect(par.values.length).toBe(ref.values.length);
  const valueMismatch = Array.from(ref.values).findIndex((x, i) => !Object.is(x, par.values[i]));
  expect(valueMismatch).toBe(-1);
  const qMismatch = Array.from(ref.q).findIndex((x, i) => !Object.is(x, par.q[i]));
  expect(qMismatch).toBe(-1);
  expect(Array.from(par.policy)).toEqual(Array.from(ref.policy));
}

describe("valueIterationParallel on the benchmark test vectors (PROBLEM.md section 8)", () => {
  const VECTORS: [number, number, string][] = [
    [3, 3, "CHECK vi W=3 H=3 iters=5 vsum=6.840798000000 vbits=401b5cfa26a22b38 vstart=0.940598000000 greedy_len=4 greedy_end=goal"],
    [7, 5, "CHECK vi W=7 H=5 iters=11 vsum=26.731036039913 vbits=403abb252d8b9f94 vstart=0.827034494967 greedy_len=10 greedy_end=goal"],
    [31, 47, "CHECK vi W=31 H=47 iters=77 vsum=567.230984757711 vbits=4081b9d90e8961f3 vstart=-0.058826716829 greedy_len=76 greedy_end=goal"],
  ];
  for (const [W, H, expected] of VECTORS) {
    it(`vi ${W} ${H}: CHECK line (vbits) of the peers, and bit-identical to one thread`, async () => {
      const p = lavaModel(W, H);
      const opts = { gamma: LAVA_GAMMA, tol: 1e-10 };
      const ref = valueIteration(p.model, p.reward, opts);
      for (const threads of [2, 3]) {
        const par = await valueIterationParallel(p.model, p.reward, { ...opts, threads });
        expectSame(par, ref);
        const rollout = greedyRollout(p, (s) => par.policy[s]);
        expect(viCheckLine({ W, H, iters: par.iters, values: par.values, rollout })).toBe(expected);
      }
      // PROBLEM.md section 6: iters = (largest shortest-path distance) + 1 = W + H - 1 on these fields.
      if (W === H) expect(ref.iters).toBe(W + H - 1);
    });
  }
});

/**
 * Random MDP: 2..40 states (state 0 never terminal), 1..5 actions, 1..3 outcomes per pair; half of
 * them deterministic (first outcome only), so all three sweep kernels (unrolled 4-action,
 * deterministic loop, general) run split across threads.
 */
const mdpArb = (det: boolean) => randomMdp({ states: [2, 40], actions: [1, 5], gamma: [0.5, 0.97], deterministic: det });

describe("valueIterationParallel on random models (property: identical to one thread)", () => {
  for (const det of [true, false]) {
    it(`${det ? "deterministic" : "stochastic"} models, 2 and 3 threads, tol and maxIters honoured alike`, async () => {
      await fc.assert(
        fc.asyncProperty(mdpArb(det), fc.integer({ min: 2, max: 3 }), fc.constantFrom(1e-10, 1e-3), fc.constantFrom(undefined, 1, 7), async ({ model, reward, gamma }, threads, tol, maxIters) => {
          const opts = { gamma, tol, maxIters };
          const ref = valueIteration(model, reward, opts);
          const par = await valueIterationParallel(model, reward, { ...opts, threads });
          expectSame(par, ref);
        }),
        { numRuns: 6, seed: det ? 20240611 : 20240612 },
      );
    });
  }

  it("partition: contiguous ranges covering every live state, balanced by outcomes", () => {
    fc.assert(
      fc.property(mdpArb(false), fc.integer({ min: 1, max: 6 }), ({ model }, threads) => {
        const live = Int32Array.from(Array.from({ length: model.nStates }, (_, s) => s).filter((s) => !model.terminal[s]));
        const b = partition(model, live, threads);
        expect(b.length).toBe(threads + 1);
        expect(b[0]).toBe(0);
        expect(b[threads]).toBe(live.length);
        for (let t = 0; t < threads; t++) expect(b[t + 1]).toBeGreaterThanOrEqual(b[t]);
      }),
      { numRuns: 50, seed: 7 },
    );
  });
});

describe("valueIterationParallel on the built-in scenarios", () => {
  it("every scenario and reward variant: identical to one thread (assay-carousel is stochastic and shaped)", async () => {
    let stochastic = 0;
    for (const name of builtinScenarioNames()) {
      const { model } = loadEnvSync(name);
      if (model.saStart[model.nStates * model.nActions] > model.nStates * model.nActions) stochastic++;
      for (const variant of Object.values(model.variants ?? {})) {
        const reward = designerReward(model, variant);
        expectSame(await valueIterationParallel(model, reward), valueIteration(model, reward));
      }
      expectSame(await valueIterationParallel(model, model.intent, { threads: 2 }), valueIteration(model, model.intent));
    }
    // The general (stochastic) kernel must be among those exercised here.
    expect(stochastic).toBeGreaterThan(0);
  });
});

describe("valueIterationParallel options", () => {
  const p = lavaModel(7, 5);
  it("threads = 1 runs on the calling thread alone, same result", async () => {
    expectSame(await valueIterationParallel(p.model, p.reward, { threads: 1 }), valueIteration(p.model, p.reward));
  });
  it("rejects a thread count below 1 or non-integer, and in-place sweeps, with an InputError", async () => {
    await expect(valueIterationParallel(p.model, p.reward, { threads: 0 })).rejects.toBeInstanceOf(InputError);
    await expect(valueIterationParallel(p.model, p.reward, { threads: 1.5 })).rejects.toMatchObject({ code: "config.threads" });
    await expect(valueIterationParallel(p.model, p.reward, { inPlace: true })).rejects.toMatchObject({ code: "config.parallelInPlace" });
  });
  it("prepared threads can be closed without sweeping; run is once only", async () => {
    const idle = await prepareParallelSweeps(p.model, p.reward, { threads: 2 });
    await idle.close();
    const once = await prepareParallelSweeps(p.model, p.reward, { threads: 2 });
    expect(once.run().iters).toBe(valueIteration(p.model, p.reward).iters);
    expect(() => once.run()).toThrow(/once/);
    await once.close();
  });
});
