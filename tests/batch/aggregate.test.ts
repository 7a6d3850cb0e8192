import fc from "fast-check";
import wilsonLowerBound from "wilson-score";
import { describe, expect, it } from "vitest";
import { aggregateComparison, comparisonCsv, type RunRecord } from "../../src/batch/aggregate.js";
import { progressLine } from "../../src/cli/progress.js";
import { jobIdOf, parseSeedList, planSweep } from "../../src/batch/plan.js";

const rec = (reward: string, learner: string, seed: number, intent: number, extra: Partial<RunRecord> = {}): RunRecord => ({
  reward,
  learner,
  seed,
  ok: true,
  verdict: "aligned",
  designer: intent,
  intent,
  alerts: 0,
  runId: `${reward}-${learner}-${seed}`,
  runDir: `/r/${reward}-${learner}-${seed}`,
  ...extra,
});

/** Records of one variant from a runs x tasks matrix (rows = seeds 1.., columns = learners). */
function fromMatrix(reward: string, rows: number[][], learners: string[]): RunRecord[] {
  return rows.flatMap((row, r) => row.map((v, t) => rec(reward, learners[t], r + 1, v)));
}

describe("compare aggregation against hand-computed cases", () => {
  it("rliable metrics_test reference: X 4x2, Y 3x2 (a failed seed drops out of Y), P(X > Y) = 1/3", () => {
    // REFERENCE_VALUES.md §7 "Reference test" (rliable tests/rliable/metrics_test.py):
    // X = [[1,2],[2,2],[1,1],[2,1]], Y = [[1,1],[2,2],[3,3]]; mean = median = IQM: X 1.5, Y 2; P(X > Y) = 1/3.
    const learners = ["q-learning", "sarsa"];
    const x = fromMatrix("x", [[1, 2], [2, 2], [1, 1], [2, 1]], learners);
    const y = fromMatrix("y", [[1, 1], [2, 2], [3, 3]], learners);
    // Seed 4 of y failed on one learner: the whole seed row leaves y's matrix (rectangular runs x tasks).
    y.push(rec("y", "q-learning", 4, 9), { reward: "y", learner: "sarsa", seed: 4, ok: false, error: { code: "module.threw", message: "boom" } });
    const s = aggregateComparison([...x, ...y], { env: "e", rewards: ["x", "y"], learners, seeds: [1, 2, 3, 4], bootstrapSeed: 7, reps: 500 });
    const [vx, vy] = s.variants;
    expect([vx.intent.mean, vx.intent.median, vx.intent.iqm]).toEqual([1.5, 1.5, 1.5]);
    expect([vy.intent.mean, vy.intent.median, vy.intent.iqm]).toEqual([2, 2, 2]);
    expect(vy.runs).toBe(7);
    expect(vy.failed).toBe(1);
    expect(s.pairs).toHaveLength(1);
    expect(s.pairs[0].a).toBe("x");
    expect(s.pairs[0].probabilityOfImprovement).toBeCloseTo(1 / 3, 12);
    const [lo, hi] = s.pairs[0].ci!;
    expect(lo).toBeLessThanOrEqual(1 / 3);
    expect(hi).toBeGreaterThanOrEqual(1 / 3);
    expect(s.ranking).toEqual(["y", "x"]);
    expect(s.failed).toEqual([{ reward: "y", learner: "sarsa", seed: 4, code: "module.threw", message: "boom" }]);
  });

  it("IQM of twelve finals is 6.5 (HandWiki interquartile-mean worked example, REFERENCE_VALUES.md §7)", () => {
    const finals = [5, 8, 4, 38, 8, 6, 9, 7, 7, 3, 1, 6];
    const s = aggregateComparison(
      finals.map((v, i) => rec("v", "q-learning", i + 1, v)),
      { env: "e", rewards: ["v"], learners: ["q-learning"], seeds: finals.map((_, i) => i + 1), bootstrapSeed: 1, reps: 200 },
    );
    expect(s.variants[0].intent.iqm).toBeCloseTo(6.5, 12);
    expect(s.variants[0].intent.mean).toBeCloseTo(8.5, 12); // arithmetic mean of the same data (same source)
    // rliable's median is the median OVER TASKS of per-task run means (§7 "Other aggregates"): with one
    // task it is that task's mean, 8.5, not the median of the runs.
    expect(s.variants[0].intent.median).toBeCloseTo(8.5, 12);
  });

  it("bootstrap CI of the IQM on two runs [0, 1]: the resampled mean takes 0, 1/2, 1 with 1/4, 1/2, 1/4, so the 95% percentile CI is [0, 1] (hand-computed)", () => {
    // IQM of 2 values cuts floor(0.5) = 0 from each end (scipy trim_mean convention, §7): it is the mean.
    const s = aggregateComparison([rec("v", "q-learning", 1, 0), rec("v", "q-learning", 2, 1)], {
      env: "e",
      rewards: ["v"],
      learners: ["q-learning"],
      seeds: [1, 2],
      bootstrapSeed: 3,
      reps: 2000,
    });
    expect(s.variants[0].intent.iqm).toBe(0.5);
    expect(s.variants[0].intent.ci).toEqual([0, 1]);
  });

  it("alert rate uses the Wilson score interval: 81 alerted of 263 runs vs the wilson-score npm package", () => {
    // Reference library: wilson-score@1.0.0 (npm) gives the lower bound; upper(x, n) = 1 - lower(n - x, n).
    // 81/263 is Newcombe (1998)'s example count (from memory of the paper's Table I).
    const z = 1.959963984540054;
    const records = Array.from({ length: 263 }, (_, i) => rec("v", "q-learning", i + 1, 0.5, { alerts: i < 81 ? 2 : 0, verdict: i < 81 ? "decoupled" : "aligned" }));
    const s = aggregateComparison(records, { env: "e", rewards: ["v"], learners: ["q-learning"], seeds: records.map((r) => r.seed), bootstrapSeed: 1, reps: 50 });
    const v = s.variants[0];
    const lower = (wilsonLowerBound as (u: number, t: number, z?: number) => number)(81, 263, z);
    const upper = 1 - (wilsonLowerBound as (u: number, t: number, z?: number) => number)(263 - 81, 263, z);
    expect(v.alertRate.p).toBeCloseTo(81 / 263, 12);
    expect(v.alertRate.ci![0]).toBeCloseTo(lower, 9);
    expect(v.alertRate.ci![1]).toBeCloseTo(upper, 9);
    expect(v.verdicts).toEqual({ aligned: 182, decoupled: 81, inconclusive: 0 });
  });

  it("ranking is by intent IQM, highest first; ties keep the --rewards order; a variant with no completed run goes last", () => {
    const learners = ["q-learning"];
    const records = [
      ...[0.2, 0.2, 0.2, 0.2].map((v, i) => rec("low", "q-learning", i + 1, v)),
      ...[0.9, 0.9, 0.9, 0.9].map((v, i) => rec("high", "q-learning", i + 1, v)),
      ...[0.9, 0.9, 0.9, 0.9].map((v, i) => rec("tie", "q-learning", i + 1, v)),
      ...[1, 2, 3, 4].map((seed) => ({ reward: "dead", learner: "q-learning", seed, ok: false, error: { code: "reward.unknown", message: "no" } })),
    ];
    const s = aggregateComparison(records, { env: "e", rewards: ["dead", "low", "high", "tie"], learners, seeds: [1, 2, 3, 4], bootstrapSeed: 0, reps: 100 });
    expect(s.ranking).toEqual(["high", "tie", "low", "dead"]);
    const dead = s.variants[0];
    expect(dead.runs).toBe(0);
    expect(dead.intent).toEqual({ mean: null, median: null, iqm: null, ci: null });
    expect(dead.alertRate).toEqual({ p: null, ci: null });
    expect(s.pairs.filter((p) => p.a === "dead" || p.b === "dead").every((p) => p.probabilityOfImprovement === null)).toBe(true);
    // Constant columns: every pair of runs compares the same way (definition of S(x, y), §7).
    expect(s.pairs.find((p) => p.a === "low" && p.b === "high")!.probabilityOfImprovement).toBe(0);
    expect(s.pairs.find((p) => p.a === "high" && p.b === "tie")!.probabilityOfImprovement).toBe(0.5);
  });

  it("property: intervals are ordered and contain the point; the same bootstrap seed gives the same document", () => {
    fc.assert(
      fc.property(fc.array(fc.double({ min: -1, max: 2, noNaN: true }), { minLength: 2, maxLength: 12 }), fc.nat(1000), (xs, seed) => {
        const records = xs.map((v, i) => rec("v", "q-learning", i + 1, v));
        const opts = { env: "e", rewards: ["v"], learners: ["q-learning"], seeds: xs.map((_, i) => i + 1), bootstrapSeed: seed, reps: 200 };
        const a = aggregateComparison(records, opts);
        const b = aggregateComparison(records, opts);
        expect(JSON.stringify(a)).toBe(JSON.stringify(b));
        const { iqm, ci } = a.variants[0].intent;
        expect(ci![0]).toBeLessThanOrEqual(ci![1]);
        expect(ci![0]).toBeLessThanOrEqual(Math.max(...xs));
        expect(ci![1]).toBeGreaterThanOrEqual(Math.min(...xs));
        expect(iqm!).toBeGreaterThanOrEqual(Math.min(...xs) - 1e-12);
      }),
      { numRuns: 40 },
    );
  });
});

/** Minimal RFC 4180 reader for the round-trip check. */
function readCsv(text: string): string[][] {
  const rows: string[][] = [];
  let row: string[] = [];
  let cell = "";
  let quoted = false;
  for (let i = 0; i < text.length; i++) {
    const c = text[i];
    if (quoted) {
      if (c === '"' && text[i + 1] === '"') (cell += '"'), i++;
      else if (c === '"') quoted = false;
      else cell += c;
    } else if (c === '"') quoted = true;
    else if (c === ",") row.push(cell), (cell = "");
    else if (c === "\n") row.push(cell), rows.push(row), (row = []), (cell = "");
    else cell += c;
  }
  return rows;
}

describe("comparison CSV", () => {
  it("one row per run with the documented columns; failed runs read 'failed'; property: odd file names round-trip (RFC 4180)", () => {
    fc.assert(
      fc.property(fc.array(fc.string(), { minLength: 1, maxLength: 5 }), (names) => {
        const records = names.map((n, i) => rec(`r${i}`, "q-learning", i, 0.25, { runDir: n }));
        records.push({ reward: "bad", learner: "sarsa", seed: 9, ok: false });
        const rows = readCsv(comparisonCsv("env,with comma", records));
        expect(rows[0]).toEqual(["env", "reward", "learner", "seed", "verdict", "designer", "intent", "alerts", "runDir"]);
        expect(rows).toHaveLength(records.length + 1);
        names.forEach((n, i) => expect(rows[i + 1]).toEqual(["env,with comma", `r${i}`, "q-learning", String(i), "aligned", "0.25", "0.25", "0", n]));
        expect(rows[rows.length - 1]).toEqual(["env,with comma", "bad", "sarsa", "9", "failed", "", "", "", ""]);
      }),
      { numRuns: 50 },
    );
  });
});

describe("sweep plan", () => {
  it("every variant runs on the same seeds; job ids are deterministic and distinct", () => {
    const spec = { env: "fresh-coat-tug", rewards: ["fast", "default"], learners: ["q-learning", "sarsa"], seeds: [3, 1, 2], steps: 100 };
    const a = planSweep(spec);
    const b = planSweep(spec);
    expect(a.map((j) => j.jobId)).toEqual(b.map((j) => j.jobId));
    expect(new Set(a.map((j) => j.jobId)).size).toBe(12);
    for (const r of spec.rewards) for (const l of spec.learners) expect(a.filter((j) => j.cell.reward === r && j.cell.learner === l).map((j) => j.cell.seed)).toEqual([3, 1, 2]);
    expect(jobIdOf({ env: "x", seed: 1 })).not.toBe(jobIdOf({ env: "x", seed: 2 }));
    expect(jobIdOf({ env: "m.json", seed: 1 }, { "m.json": "A" })).not.toBe(jobIdOf({ env: "m.json", seed: 1 }, { "m.json": "B" }));
  });

  it("parses seed lists and ranges; rejects duplicates and junk with a typed error", () => {
    expect(parseSeedList("1,2,5-7")).toEqual([1, 2, 5, 6, 7]);
    expect(() => parseSeedList("1,1")).toThrow(/appears twice/);
    expect(() => parseSeedList("a")).toThrow(/not a seed/);
    expect(() => parseSeedList("")).toThrow(/empty/);
  });

  it("progress line: 5 of 10 runs in 10 s leaves an ETA of 10 s (by hand)", () => {
    expect(progressLine(5, 10, 1, 10_000, 10)).toBe("[#####.....] 5/10 runs, 1 failed  ETA 0:10");
    expect(progressLine(10, 10, 0, 99_000, 4)).toBe("[####] 10/10 runs  ETA 0:00");
  });
});
