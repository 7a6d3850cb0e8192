/**
 * Benchmark entry "layouts": held-out evaluation speed of every built-in layout family — layouts per
 * second of load + exact solve + regretNorm on one thread (the retune command's held-out loop,
 * `evaluateHoldout`), for layouts 1..N (N = 100, quick 20) with the family's first reward variant.
 * The family with the most states per layout is the "largest"; for it the time of 100 held-out
 * layouts on one thread is set against the goal of 10 s, and (not in quick mode) on the worker pool.
 * Reported, never enforced.
 */
import { spawnSync } from "node:child_process";
import { fileURLToPath } from "node:url";
import { builtinScenarioNames, loadEnvSync, withLayout } from "../env/index.js";
import { holdoutRegretsParallel } from "../tune/parallel.js";
import { evaluateHoldout } from "../tune/run.js";
import type { BenchEntry } from "./harness.js";

const now = (): number => Number(process.hrtime.bigint()) / 1e9;

export interface LayoutTiming {
  family: string;
  reward: string;
  layouts: number;
  meanStates: number;
  seconds: number;
  perSecond: number;
  gaming: number;
}

export function timeFamily(family: string, n: number): LayoutTiming {
  const m0 = loadEnvSync(family).model;
  const reward = Object.keys(m0.variants ?? {})[0];
  const weights = { ...(m0.variants?.[reward]?.weights ?? {}) };
  const layouts = Array.from({ length: n }, (_, i) => i + 1);
  let states = 0;
  const t = now();
  const s = evaluateHoldout(layouts, (k) => {
    const m = loadEnvSync(withLayout(family, k)).model;
    states += m.nStates;
    return m;
  }, weights);
  const seconds = now() - t;
  return { family, reward, layouts: n, meanStates: states / n, seconds, perSecond: n / seconds, gaming: s.gaming };
}

export function runLayoutsBench(opts: { quick: boolean }): { lines: string[]; summary: string[] } {
  const n = opts.quick ? 20 : 100;
  const rows = builtinScenarioNames().map((f) => timeFamily(f, n));
  const largest = rows.reduce((a, r) => (r.meanStates > a.meanStates ? r : a));
  const lines = [
    "family                      reward               layouts  mean states   seconds  layouts/s  gaming",
    ...rows.map((r) => `${r.family.padEnd(27)} ${r.reward.padEnd(20)} ${String(r.layouts).padStart(7)} ${r.meanStates.toFixed(0).padStart(12)} ${r.seconds.toFixed(2).padStart(9)} ${r.perSecond.toFixed(1).padStart(10)} ${String(r.gaming).padStart(7)}`),
  ];
  const per100 = 100 / largest.perSecond;
  const slowest = rows.reduce((a, r) => (r.perSecond < a.perSecond ? r : a));
  const summary = [`layouts: largest family ${largest.family} (${largest.meanStates.toFixed(0)} states per layout): ${largest.perSecond.toFixed(1)} layouts/s on one thread, 100 held-out layouts in ${per100.toFixed(1)} s (goal < 10 s)`];
  if (slowest !== largest) summary.push(`layouts: slowest family ${slowest.family}: ${slowest.perSecond.toFixed(1)} layouts/s, 100 held-out layouts in ${(100 / slowest.perSecond).toFixed(1)} s on one thread (the retune command deals more than 50 to worker threads)`);
  if (!opts.quick) {
    // The pool is asynchronous and entries are not: it is timed in a child process (this file, --child).
    const r = spawnSync(process.execPath, [fileURLToPath(import.meta.url), "--child", largest.family, largest.reward], { encoding: "utf8" });
    const secs = /seconds=([0-9.]+)/.exec(r.stdout ?? "")?.[1];
    summary.push(secs ? `layouts: ${largest.family}, 100 held-out layouts on 2 worker threads: ${Number(secs).toFixed(1)} s (start-up included)` : `layouts: pool child failed: ${(r.stderr ?? "").trim().split("\n").slice(-1)[0]}`);
  }
  return { lines, summary };
}

/** Child mode: 100 held-out layouts of `family` on 2 worker threads; prints the seconds. */
export async function layoutsChild(family: string, reward: string): Promise<void> {
  const m0 = loadEnvSync(family).model;
  const layouts = Array.from({ length: 100 }, (_, i) => i + 1);
  const t = now();
  await holdoutRegretsParallel(family, layouts, { ...(m0.variants?.[reward]?.weights ?? {}) }, { threads: 2 });
  process.stdout.write(`TIME layouts-pool family=${family} seconds=${(now() - t).toFixed(4)}\n`);
}

export const layoutsEntry: BenchEntry = {
  name: "layouts",
  title: "held-out layout evaluation (load + exact solve + regretNorm) of every built-in layout family, layouts per second on one thread",
  run(ctx) {
    const r = runLayoutsBench(ctx.opts);
    process.stdout.write(r.lines.join("\n") + "\n\n");
    return { ok: true, summary: r.summary };
  },
};

if (process.argv[1] && fileURLToPath(import.meta.url) === process.argv[1] && process.argv[2] === "--child") {
  void layoutsChild(process.argv[3] ?? "", process.argv[4] ?? "");
}
