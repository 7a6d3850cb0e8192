import { mkdtempSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { afterAll, describe, expect, it } from "vitest";
import { resolveTrainConfig, runTraining } from "../../src/train/run.js";
import { TRAIN_DEFAULTS, checkpointEvery } from "../../src/train/config.js";

const runs = mkdtempSync(join(tmpdir(), "gapwatch-train-"));
afterAll(() => rmSync(runs, { recursive: true, force: true }));

describe("runTraining config", () => {
  it("fills defaults: q-learning, seed 1, 20 checkpoints, exact evaluation, the model's discount", async () => {
    const { config, model } = await resolveTrainConfig({ env: "quench-hall-run" });
    expect(config).toMatchObject({ learner: TRAIN_DEFAULTS.learner, seed: 1, checkpoints: 20, evaluation: "exact", reward: "default" });
    expect(config.learnerParams.gamma).toBe(model.gamma);
    expect(config.steps % config.checkpoints).toBe(0);
    expect(checkpointEvery(config) * config.checkpoints).toBe(config.steps);
  });

  it("rejects bad values with typed input errors", async () => {
    await expect(resolveTrainConfig({ env: "quench-hall-run", steps: 0 })).rejects.toMatchObject({ code: "config.steps", exitCode: 2 });
    await expect(resolveTrainConfig({ env: "quench-hall-run", steps: 10, checkpoints: 20 })).rejects.toMatchObject({ code: "config.checkpoints" });
    await expect(resolveTrainConfig({ env: "quench-hall-run", evaluation: "guess" as never })).rejects.toMatchObject({ code: "config.evaluation" });
  });

  it("reaches the same verdict with Monte Carlo scoring as with exact scoring on a gaming and a sound variant", async () => {
    for (const reward of ["fast", "default"]) {
      const exact = await runTraining({ env: "fresh-coat-tug", reward, seed: 4 }, { runsDir: runs, sync: true });
      const mc = await runTraining({ env: "fresh-coat-tug", reward, seed: 4, evaluation: "mc", mcEpisodes: 100 }, { runsDir: runs, sync: true });
      expect(mc.verdict, reward).toBe(exact.verdict);
      expect(mc.checkpoints[19].mc?.episodes).toBe(100);
    }
  });
});
