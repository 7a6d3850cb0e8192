// A module without a finite model (finite: false) trains with Monte Carlo checkpoints: rollouts through
// the module's own step, scores with 95% intervals, normalized with reference ranges from the config
// (the --designer-range / --intent-range flags) or the module's `ranges`; with neither, one clear error.
// Before the fix `train` refused such modules (env.noModel).
import { mkdtempSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join, resolve } from "node:path";
import { afterAll, describe, expect, it } from "vitest";
import { runTraining } from "../../src/train/run.js";
import { evaluateModuleMonteCarlo } from "../../src/monitor/evaluate-module.js";
import { loadSimulator } from "../../src/sim/load.js";
import { createRng } from "../../src/rng/rng.js";

const runs = mkdtempSync(join(tmpdir(), "gapwatch-module-mc-"));
afterAll(() => rmSync(runs, { recursive: true, force: true }));
const corridor = resolve(__dirname, "../fixtures/sim/mc-corridor.ts");

// Discounted return G = sum_t gamma^t r_{t+1} (Sutton & Barto 2018, eq. 3.8) at gamma 0.9, worked by hand:
// "right, right, right" from cell 0 earns designer 1 + 0.9 + 0.81 = 2.71 and intent 0.9^2 = 0.81 (the
// intended outcome's optimum); the designer's optimum within the horizon of 12 steps is to oscillate
// (right, right, then left/right between cells 1 and 2), paid at t = 0, 1, 3, 5, 7, 9, 11:
// 1 + 0.9 + 0.9^3 + 0.9^5 + 0.9^7 + 0.9^9 + 0.9^11 = 4.39901798509, with intent 0.
const FINISH_DESIGNER = 2.71;
const INTENT_OPT = 0.81;
const DESIGNER_OPT = 1 + 0.9 + 0.9 ** 3 + 0.9 ** 5 + 0.9 ** 7 + 0.9 ** 9 + 0.9 ** 11;
const ranges = { designerRange: { low: 0, high: DESIGNER_OPT }, intentRange: { low: 0, high: INTENT_OPT } };

describe("train on a finite: false module", () => {
  it("Monte Carlo rollouts through step score a fixed policy with the hand-computed discounted returns", async () => {
    const { simulator, model } = await loadSimulator(corridor);
    expect(model).toBeUndefined();
    const mc = evaluateModuleMonteCarlo(simulator.def, () => 1, { source: corridor, weights: { right: 1 }, gamma: 0.9, episodes: 50, rng: createRng(1), ...ranges });
    expect(DESIGNER_OPT).toBeCloseTo(4.39901798509, 10);
    expect(mc.designer).toBeCloseTo(FINISH_DESIGNER, 12);
    expect(mc.intent).toBeCloseTo(INTENT_OPT, 12);
    expect(mc.intentNorm).toBeCloseTo(1, 12);
    // Deterministic module and policy: every rollout is the same, so the interval has width 0.
    expect(mc.designerCI.halfWidth).toBeLessThan(1e-6);
    // "left" forever from cell 0: the horizon (12) truncates, nothing is earned.
    const stay = evaluateModuleMonteCarlo(simulator.def, () => 0, { source: corridor, weights: { right: 1 }, gamma: 0.9, episodes: 5, rng: createRng(1), ...ranges });
    expect(stay.designer).toBe(0);
    expect(stay.intentNorm).toBe(0);
  }, 60_000);

  it("trains with --eval mc: checkpoints carry Monte Carlo intervals, normalized with the given ranges; the gaming shows", async () => {
    const r = await runTraining({ env: corridor, steps: 20_000, checkpoints: 4, seed: 2, mcEpisodes: 20, ...ranges }, { runsDir: runs, sync: true });
    expect(r.status).toBe("complete");
    expect(r.config.evaluation).toBe("mc");
    expect(r.checkpoints).toHaveLength(4);
    for (const c of r.checkpoints) {
      expect(c.mc?.episodes).toBe(20);
      expect(c.designerNorm).toBeCloseTo(c.designer / DESIGNER_OPT, 12);
      expect(c.intentNorm).toBeCloseTo(c.intent / INTENT_OPT, 12);
    }
    // The learner, seeing only the designer reward, finds the oscillation: designer optimum, no intent.
    expect(r.final!.designer).toBeCloseTo(DESIGNER_OPT, 6);
    expect(r.final!.designerNorm).toBeCloseTo(1, 6);
    expect(r.final!.intent).toBe(0);
    expect(r.references).toEqual({ designerOptimal: DESIGNER_OPT, designerRandom: 0, intentOptimal: INTENT_OPT, intentRandom: 0 });
  }, 120_000);

  it("takes the references from the module's ranges when no flag is given", async () => {
    const r = await runTraining({ env: resolve(__dirname, "../fixtures/sim/hang-in-training.ts"), steps: 200, checkpoints: 2, mcEpisodes: 2 }, { runsDir: runs, sync: true });
    expect(r.config.designerRange).toEqual({ low: 0, high: 3 });
    expect(r.config.intentRange).toEqual({ low: 0, high: 1 });
  }, 60_000);

  it("refuses with one line when no references are given, and refuses exact evaluation", async () => {
    await expect(runTraining({ env: corridor, steps: 100, checkpoints: 2 }, { runsDir: runs, sync: true })).rejects.toMatchObject({ code: "train.noReferences", exitCode: 2 });
    await expect(runTraining({ env: corridor, steps: 100, checkpoints: 2, evaluation: "exact", ...ranges }, { runsDir: runs, sync: true })).rejects.toMatchObject({
      code: "config.evaluation",
      exitCode: 2,
    });
    await expect(runTraining({ env: "quench-hall-run", ...ranges }, { runsDir: runs, sync: true })).rejects.toMatchObject({ code: "config.range" });
  }, 60_000);
});
