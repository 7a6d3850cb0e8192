import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { BOOTSTRAP_DEFAULTS, stratifiedBootstrapCI } from "../../src/stats/bootstrap.js";
import { aggregateIqm, aggregateMean, sampleSd, scoreMatrix, mean, type ScoreMatrix } from "../../src/stats/summary.js";
import { createRng } from "../../src/rng/rng.js";
import { InputError } from "../../src/errors.js";

const column = (xs: number[]): ScoreMatrix => scoreMatrix(xs.map((x) => [x]));

describe("stratified bootstrap (rliable StratifiedBootstrap: resample runs within each task)", () => {
  it("keeps the task index fixed: constant task columns give a zero-width interval", () => {
    // rliable's stratification (REFERENCE_VALUES.md section 7): runs are resampled within a task,
    // so with task 0 all 0 and task 1 all 10 every replicate mean is exactly 5. Resampling across
    // tasks (the bug this guards against) would spread replicates over [0, 10].
    const m = scoreMatrix([
      [0, 10],
      [0, 10],
      [0, 10],
    ]);
    const ci = stratifiedBootstrapCI(m, aggregateMean, createRng(1), { reps: 500 });
    expect(ci).toEqual({ point: 5, lower: 5, upper: 5 });
  });

  it("with task bootstrap the same matrix spreads to [0, 10] (replicates 0, 5, 10 w.p. 1/4, 1/2, 1/4)", () => {
    // rliable task_bootstrap=True; exact distribution hand-computed.
    const m = scoreMatrix([
      [0, 10],
      [0, 10],
    ]);
    const ci = stratifiedBootstrapCI(m, aggregateMean, createRng(2), { reps: 2000, taskBootstrap: true });
    expect(ci.point).toBe(5);
    expect(ci.lower).toBe(0);
    expect(ci.upper).toBe(10);
  });

  it("percentile quantiles follow the exact bootstrap distribution of a 2-run sample", () => {
    // Hand-computed exact bootstrap distribution of the mean of {0, 1}: 0, 0.5, 1 w.p. 1/4, 1/2, 1/4.
    // Quantiles 0.3 and 0.7 are both 0.5; quantiles 0.025 / 0.975 are 0 / 1.
    const m = column([0, 1]);
    const narrow = stratifiedBootstrapCI(m, aggregateMean, createRng(3), { reps: 4000, confidence: 0.4 });
    expect(narrow).toEqual({ point: 0.5, lower: 0.5, upper: 0.5 });
    const wide = stratifiedBootstrapCI(m, aggregateMean, createRng(3), { reps: 4000 });
    expect(wide.lower).toBe(0);
    expect(wide.upper).toBe(1);
  });

  it("basic interval reflects the percentile quantiles around the point", () => {
    // Hand-computed: mean of a resample of {0, 0, 1} is k/3, k ~ Binomial(3, 1/3):
    // P = 8/27, 12/27, 6/27, 1/27. 95 % percentile quantiles: 0 and 1 (P(<= 2/3) = 0.963 < 0.975).
    // basic = [2*(1/3) - 1, 2*(1/3) - 0] = [-1/3, 2/3].
    const m = column([0, 0, 1]);
    const pct = stratifiedBootstrapCI(m, aggregateMean, createRng(4), { reps: 4000, method: "percentile" });
    expect(pct.lower).toBe(0);
    expect(pct.upper).toBe(1);
    const basic = stratifiedBootstrapCI(m, aggregateMean, createRng(4), { reps: 4000, method: "basic" });
    expect(basic.point).toBeCloseTo(1 / 3, 12);
    expect(basic.lower).toBeCloseTo(-1 / 3, 12);
    expect(basic.upper).toBeCloseTo(2 / 3, 12);
  });

  it("for a large sample the percentile CI of the mean is close to mean -+ 1.96 s / sqrt(n)", () => {
    // Efron & Tibshirani (1993), normal approximation of the bootstrap of the mean (from memory);
    // a loose 15 % width check on n = 400 uniform draws.
    const rng = createRng(5);
    const xs = Array.from({ length: 400 }, () => rng.float());
    const ci = stratifiedBootstrapCI(column(xs), aggregateMean, createRng(6), { reps: 2000 });
    const half = (1.959963984540054 * sampleSd(xs)) / Math.sqrt(xs.length);
    expect(ci.point).toBeCloseTo(mean(xs), 12);
    expect((ci.upper - ci.lower) / (2 * half)).toBeGreaterThan(0.85);
    expect((ci.upper - ci.lower) / (2 * half)).toBeLessThan(1.15);
    expect(Math.abs((ci.upper + ci.lower) / 2 - ci.point)).toBeLessThan(0.2 * half);
  });

  it("is reproducible from the seed and changes with it", () => {
    const rng = createRng(7);
    const m = scoreMatrix(Array.from({ length: 10 }, () => [rng.float(), rng.float(), rng.float()]));
    const a = stratifiedBootstrapCI(m, aggregateIqm, createRng("s"), { reps: 300 });
    const b = stratifiedBootstrapCI(m, aggregateIqm, createRng("s"), { reps: 300 });
    const c = stratifiedBootstrapCI(m, aggregateIqm, createRng("t"), { reps: 300 });
    expect(a).toEqual(b);
    expect(c).not.toEqual(a);
  });

  it("documents its defaults", () => {
    // rliable library.py via REFERENCE_VALUES.md section 7: method 'percentile', confidence_interval_size
    // 0.95, task_bootstrap False, reps 2000 (create_performance_profile's default; get_interval_estimates
    // uses 50000, which this project does not adopt).
    expect(BOOTSTRAP_DEFAULTS).toEqual({ reps: 2000, confidence: 0.95, method: "percentile", taskBootstrap: false });
  });

  it("rejects bad options with typed errors", () => {
    const m = column([1, 2]);
    expect(() => stratifiedBootstrapCI(m, aggregateMean, createRng(1), { reps: 0 })).toThrow(InputError);
    expect(() => stratifiedBootstrapCI(m, aggregateMean, createRng(1), { confidence: 1 })).toThrow(InputError);
  });

  it("property: lower <= point <= upper for the percentile interval of the mean", () => {
    fc.assert(
      fc.property(
        fc.array(fc.array(fc.double({ min: -100, max: 100, noNaN: true }), { minLength: 2, maxLength: 2 }), {
          minLength: 1,
          maxLength: 12,
        }),
        fc.integer({ min: 0, max: 1_000_000 }),
        (rows, seed) => {
          const ci = stratifiedBootstrapCI(scoreMatrix(rows), aggregateMean, createRng(seed), { reps: 200 });
          return ci.lower <= ci.point + 1e-9 && ci.point <= ci.upper + 1e-9;
        },
      ),
      { numRuns: 60 },
    );
  });
});
