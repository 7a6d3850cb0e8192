/**
 * The fuzzer as a standing test: a short seeded run of mutated model and reward files through
 * `solve`, `audit` and `check` (in-process). Every case must end with exit 0 and finite output, or
 * exit 2 with one line; never exit 1, a throw, a multi-line error, non-finite numbers or a slow case.
 * The long run is `npx tsx scripts/fuzz.ts --cases 10000` (figures in DEVELOPERS.md).
 */
import { describe, expect, it } from "vitest";
import { isFailure, mutate, runFuzz, seedFiles, summarize } from "../helpers/fuzz.js";
import { createRng } from "../../src/rng/rng.js";

describe("fuzzing model and reward files", () => {
  it("the mutation engine is seeded: the same seed gives the same mutants, another seed others", () => {
    const base = seedFiles()[0].model;
    const a = Array.from({ length: 20 }, (_, i) => mutate(base, createRng(`m/${i}`)));
    const b = Array.from({ length: 20 }, (_, i) => mutate(base, createRng(`m/${i}`)));
    const c = Array.from({ length: 20 }, (_, i) => mutate(base, createRng(`other/${i}`)));
    expect(a).toEqual(b);
    expect(a).not.toEqual(c);
    expect(a.every((t) => t !== base)).toBe(true);
  });

  it("300 seeded cases: exit 0 with finite output or exit 2 with one line, each within 5 s", async () => {
    const cases = await runFuzz({ cases: 300, seed: 20261202, timeLimitMs: 5000 });
    const failures = cases.filter(isFailure).map((c) => `case ${c.index} ${c.command} ${c.target}: ${c.outcome} exit ${c.code} ${c.firstLine}`);
    expect(failures).toEqual([]);
    const s = summarize(cases);
    // both sides of the contract are exercised: some mutants still load and run, most are refused
    expect(s.outcomes.ok ?? 0).toBeGreaterThan(0);
    expect(s.outcomes.refused ?? 0).toBeGreaterThan(0);
  }, 120_000);
});
