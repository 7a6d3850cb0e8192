// Ctrl-C during `train` is honoured within about a second: between batches of steps (not only at
// checkpoints), and, for a simulator module whose code never returns, by ending its training thread
// after a 1 s grace period. The bounds below are the command's promised responsiveness (the issue's
// "within a second", plus scheduling slack on a shared machine), not speed goals.
import { mkdtempSync, readFileSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join, resolve } from "node:path";
import { afterAll, describe, expect, it } from "vitest";
import { runTrainCommand } from "../../src/app/train.js";
import { runTraining } from "../../src/train/run.js";

const runs = mkdtempSync(join(tmpdir(), "gapwatch-interrupt-"));
afterAll(() => rmSync(runs, { recursive: true, force: true }));
const fixture = (p: string) => resolve(__dirname, "../fixtures", p);

/** Resolve when `p` settles: how long after `t0` it did, and its value or error. */
async function settleAfter<T>(p: Promise<T>, since: () => number) {
  try {
    const value = await p;
    return { ms: performance.now() - since(), value, error: undefined };
  } catch (error) {
    return { ms: performance.now() - since(), value: undefined, error: error as { code?: string; exitCode?: number } };
  }
}

describe("train honours an interrupt within about a second", () => {
  it("a long run on a built-in scenario stops mid-checkpoint, stored as interrupted", async () => {
    const signal = { aborted: false };
    let abortedAt = 0;
    // 2 checkpoints over 2e8 steps: one chunk is far longer than a second.
    const run = runTraining({ env: "quench-hall-run", steps: 200_000_000, checkpoints: 2, seed: 3 }, { runsDir: runs, signal });
    setTimeout(() => {
      signal.aborted = true;
      abortedAt = performance.now();
    }, 500);
    const r = await settleAfter(run, () => abortedAt);
    expect(r.error).toBeUndefined();
    expect(r.value!.status).toBe("interrupted");
    expect(r.value!.steps).toBeLessThan(100_000_000);
    expect(r.ms).toBeLessThan(1000);
    expect(JSON.parse(readFileSync(join(r.value!.runDir, "summary.json"), "utf8")).status).toBe("interrupted");
  }, 60_000);

  it("a module whose step hangs during training: the thread is ended and the summary says interrupted", async () => {
    const signal = { aborted: false };
    let abortedAt = 0;
    let armed = false;
    const run = runTrainCommand({
      input: { env: fixture("sim/hang-in-training.ts"), steps: 8000, checkpoints: 4, seed: 1, mcEpisodes: 20 },
      runsDir: runs,
      signal,
      // Abort ~500 ms after the first checkpoint: by then step has hung (after K = 3000 calls, within the
      // second 2000-step chunk).
      onProgress: () => {
        if (armed) return;
        armed = true;
        setTimeout(() => {
          signal.aborted = true;
          abortedAt = performance.now();
        }, 500);
      },
    });
    const r = await settleAfter(run, () => abortedAt);
    expect(r.error).toBeUndefined();
    const result = r.value!.result;
    expect(result.status).toBe("interrupted");
    expect(result.checkpoints.length).toBeGreaterThanOrEqual(1);
    expect(r.ms).toBeLessThan(2000);
    expect(JSON.parse(readFileSync(join(result.runDir, "summary.json"), "utf8")).status).toBe("interrupted");
    expect(r.value!.doc.status).toBe("interrupted");
  }, 120_000);

  it("a module whose step hangs while it loads: the command ends with exit code 130", async () => {
    const signal = { aborted: false };
    const t0 = performance.now();
    setTimeout(() => (signal.aborted = true), 500);
    const r = await settleAfter(runTrainCommand({ input: { env: fixture("batch/hang-step.ts"), steps: 100 }, runsDir: runs, signal }), () => t0);
    expect(r.error).toMatchObject({ code: "train.interrupted", exitCode: 130 });
    expect(r.ms).toBeLessThan(2500);
  }, 60_000);
});
