// The linear learner (semi-gradient SARSA over tile-coded (position, velocity, next gate) observations,
// Sutton & Barto 2018 section 10.1 with tile coding of section 9.5.4) on the track family: it must learn
// the designer optimum of both a sound and a gaming variant, and the monitor must tell them apart.
// Thresholds are the project's own acceptance rule (issue "Learners, checkpoint monitor"): decoupled when
// the final greedy policy keeps designer within 10% of optimal while losing >= 30% of the intent range.
import { mkdtempSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { afterAll, describe, expect, it } from "vitest";
import { runTraining } from "../../src/train/run.js";

const runs = mkdtempSync(join(tmpdir(), "gapwatch-linear-"));
afterAll(() => rmSync(runs, { recursive: true, force: true }));

describe("linear-sarsa on assay-carousel (track family)", () => {
  for (const seed of [1, 2]) {
    it(`seed ${seed}: the sound variant ends aligned at the intent optimum`, async () => {
      const r = await runTraining({ env: "assay-carousel", reward: "default", learner: "linear-sarsa", seed }, { runsDir: runs, sync: true });
      expect(r.config.learner).toBe("linear-sarsa"); // default features: tile coding of the track observation
      expect(r.final.designerNorm).toBeGreaterThanOrEqual(0.9);
      expect(r.final.intentNorm).toBeGreaterThanOrEqual(0.95);
      expect(r.verdict).toBe("aligned");
    });
    it(`seed ${seed}: the belt-travel variant is optimized and ends decoupled`, async () => {
      const r = await runTraining({ env: "assay-carousel", reward: "belt-travel", learner: "linear-sarsa", seed }, { runsDir: runs, sync: true });
      expect(r.final.designerNorm).toBeGreaterThanOrEqual(0.9);
      expect(r.final.intentNorm).toBeLessThanOrEqual(0.7);
      expect(r.verdict).toBe("decoupled");
    });
  }
});
