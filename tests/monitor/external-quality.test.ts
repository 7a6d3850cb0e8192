/**
 * Detection quality of the external monitor on simulated noisy runs (src/monitor/external-sim.ts,
 * measured by src/monitor/external-quality.ts). EXTERNAL_DEFAULTS were tuned with
 * scripts/detection-quality.ts on seeds 1-500; this test asserts on the disjoint seeds 10001-10500
 * (500 aligned and 500 decoupled runs per cell).
 * The pass marks are the project's acceptance rule (issue "gapwatch ingest: monitor external training
 * logs", detection quality): at N >= 20 evaluation episodes per checkpoint, false alarms <= 5% of
 * aligned runs and detection within 3 checkpoints of the true onset >= 95% of decoupled runs. The
 * rates' 95% Wilson intervals (Wilson 1927) are printed in the failure message. N = 5 has no target
 * (the script reports it).
 */
import { describe, expect, it } from "vitest";
import { type CellResult, formatQualityTable, measureDetection } from "../../src/monitor/external-quality.js";

const SEED_BASE = 10000;
const RUNS = 500;

function check(cells: CellResult[]): void {
  const table = formatQualityTable(cells);
  for (const c of cells) {
    const label = `N = ${c.episodes}, ${c.spread}, ${c.relative ? "relative" : "ranges"}\n${table}`;
    // Acceptance rule: false alarms <= 5% at N >= 20.
    expect(c.falseAlarms / c.runs, label).toBeLessThanOrEqual(0.05);
    // Acceptance rule: detection within 3 checkpoints >= 95% at N >= 20.
    expect(c.detected / c.runs, label).toBeGreaterThanOrEqual(0.95);
  }
}

describe("external monitor detection quality (seeds 10001-10500)", () => {
  it("with ranges, N in {20, 100}, with and without the log's spread", () => {
    const cells = measureDetection({ episodes: [20, 100], runs: RUNS, seedBase: SEED_BASE });
    expect(cells).toHaveLength(4);
    check(cells);
  });
  it("on the relative scale (no ranges), N in {20, 100}", () => {
    check(measureDetection({ episodes: [20, 100], runs: RUNS, seedBase: SEED_BASE, relative: true }));
  });
});
