/**
 * Bench entry "report": time to render the HTML report of a 20-variant comparison (10 seeds per
 * variant, 20 checkpoints per run, two alerts per gaming run, the full 20 x 20 pairwise matrix), from
 * data synthesized in the shape of comparison.json and run directories. Rendering includes compiling
 * every Vega-Lite chart and rendering it to SVG headlessly.
 *
 * The timing runs in a child process (`node dist/src/bench/report.js --child ROUNDS VARIANTS`, like
 * every other entry's programs) because rendering is asynchronous and the bench driver is not. The
 * child renders one uncounted warm-up report, then ROUNDS timed ones, and prints one line per round:
 *   TIME report variants=20 runs=200 seconds=<s> bytes=<html length>
 */
import { spawnSync } from "node:child_process";
import { fileURLToPath } from "node:url";
import { performance } from "node:perf_hooks";
import type { ComparisonDoc, ComparisonReportData } from "../report/data.js";
import { renderComparisonReport } from "../report/comparison-report.js";
import { Xorshift32 } from "../rng/rng.js";
import type { RunResult } from "../run/schema.js";
import { median, type BenchEntry } from "./harness.js";

export const REPORT_VARIANTS = 20;
export const REPORT_SEEDS = 10;
export const REPORT_CHECKPOINTS = 20;

/** A deterministic comparison of `variants` reward variants (every third one games the specification). */
export function synthComparison(variants = REPORT_VARIANTS, seeds = REPORT_SEEDS, checkpoints = REPORT_CHECKPOINTS): ComparisonReportData {
  const rng = new Xorshift32(20240607);
  const names = Array.from({ length: variants }, (_, i) => `variant-${String(i + 1).padStart(2, "0")}`);
  const runs: RunResult[] = [];
  const finals = new Map<string, number[]>();
  for (const [vi, name] of names.entries()) {
    const gaming = vi % 3 === 1;
    const fin: number[] = [];
    for (let s = 1; s <= seeds; s++) {
      const cps = [];
      for (let c = 1; c <= checkpoints; c++) {
        const t = c / checkpoints;
        const d = Math.min(1, t * 1.4 + 0.05 * rng.float());
        const i = gaming ? Math.max(0, 0.9 - Math.max(0, t - 0.3) * 1.2 + 0.05 * rng.float()) : Math.min(1, d - 0.05 * rng.float());
        cps.push({ step: c * 1000, episodes: c * 20, designer: d, intent: i, designerNorm: d, intentNorm: i, gap: d - i, rank: null });
      }
      const last = cps[cps.length - 1];
      fin.push(last.intentNorm);
      const alerts = gaming
        ? [
            { step: 8000, kind: "intent-drop" as const, magnitude: 0.5, message: "intent fell from its peak while designer return rose" },
            { step: 12000, kind: "proxy-saturated" as const, magnitude: 0.8, message: "designer return near its optimum while intent is far below its own" },
          ]
        : [];
      runs.push({
        runId: `bench-${name}-s${s}`,
        runDir: `/nonexistent/bench-${name}-s${s}`,
        config: { env: "bench-env", reward: name, learner: "q-learning", steps: checkpoints * 1000, seed: s, checkpoints, learnerParams: {}, evaluation: "exact", mcEpisodes: 300, monitor: {} },
        status: "complete",
        verdict: gaming ? "decoupled" : "aligned",
        reason: gaming ? "designer return near its optimum while intent stays low" : "no decoupling detector is active at the end",
        checkpoints: cps,
        alerts,
        final: last,
        firstAlertStep: alerts[0]?.step ?? null,
        references: { designerOptimal: 1, designerRandom: 0, intentOptimal: 1, intentRandom: 0 },
        steps: checkpoints * 1000,
        episodes: checkpoints * 20,
        trainSeconds: 0,
        monitorSeconds: 0,
      });
    }
    finals.set(name, fin);
  }
  const summary = (xs: number[]) => {
    const s = [...xs].sort((a, b) => a - b);
    const q = Math.floor(s.length / 4);
    const mid = s.slice(q, s.length - q);
    const iqm = mid.reduce((a, b) => a + b, 0) / mid.length;
    return { mean: s.reduce((a, b) => a + b, 0) / s.length, median: s[Math.floor(s.length / 2)], iqm, ci: [Math.max(0, iqm - 0.05), Math.min(1, iqm + 0.05)] };
  };
  const doc: ComparisonDoc = {
    env: "bench-env",
    variants: names.map((name, vi) => ({
      reward: name,
      runs: seeds,
      verdicts: vi % 3 === 1 ? { decoupled: seeds, aligned: 0, inconclusive: 0 } : { aligned: seeds, decoupled: 0, inconclusive: 0 },
      alertRate: { p: vi % 3 === 1 ? 1 : 0, ci: vi % 3 === 1 ? [0.72, 1] : [0, 0.28] },
      designer: summary(runs.filter((r) => r.config.reward === name).map((r) => r.final!.designerNorm)),
      intent: summary(finals.get(name)!),
    })),
    ranking: [...names].sort((a, b) => summary(finals.get(b)!).iqm - summary(finals.get(a)!).iqm),
    pairs: names.flatMap((a, i) => names.slice(i + 1).map((b) => ({ a, b, probabilityOfImprovement: rng.float(), ci: [0, 1] }))),
  };
  return { comparison: doc, runs, generatedAt: "2024-06-07T00:00:00.000Z" };
}

/** Child mode: render warm-up + `rounds` timed reports and print a TIME line per round. */
export async function reportChild(rounds: number, variants: number): Promise<void> {
  const data = synthComparison(variants);
  await renderComparisonReport(data);
  for (let r = 0; r < rounds; r++) {
    const t0 = performance.now();
    const html = await renderComparisonReport(data);
    const s = (performance.now() - t0) / 1000;
    process.stdout.write(`TIME report variants=${variants} runs=${data.runs.length} seconds=${s.toFixed(4)} bytes=${html.length}\n`);
  }
}

export const reportEntry: BenchEntry = {
  name: "report",
  title: `HTML report of a ${REPORT_VARIANTS}-variant comparison (${REPORT_SEEDS} seeds, ${REPORT_CHECKPOINTS} checkpoints; Vega-Lite to SVG)`,
  run(ctx) {
    const rounds = Math.max(1, ctx.opts.runs);
    const self = fileURLToPath(import.meta.url);
    const r = spawnSync(process.execPath, [self, "--child", String(rounds), String(REPORT_VARIANTS)], { encoding: "utf8", maxBuffer: 1 << 24 });
    const out = (line = "") => process.stdout.write(line + "\n");
    if (r.status !== 0) {
      out(`   report child failed: ${(r.stderr || String(r.error ?? "")).trim().split("\n").slice(-1)[0]}`);
      return { ok: false, summary: ["report: child failed"] };
    }
    const secs = [...r.stdout.matchAll(/seconds=([0-9.]+)/g)].map((m) => Number(m[1]));
    const bytes = Number(/bytes=(\d+)/.exec(r.stdout)?.[1] ?? NaN);
    out(`## report ${REPORT_VARIANTS} variants x ${REPORT_SEEDS} seeds  (timed: renderComparisonReport, after one warm-up)`);
    out(`   rounds ${secs.length}  median ${median(secs).toFixed(3)} s  [${Math.min(...secs).toFixed(3)}..${Math.max(...secs).toFixed(3)}]  html ${(bytes / 1024).toFixed(0)} KiB`);
    out();
    return { ok: secs.length === rounds, summary: [`report ${REPORT_VARIANTS} variants: ${median(secs).toFixed(3)} s per report (median of ${secs.length}; no target set)`] };
  },
};

if (process.argv[1] && fileURLToPath(import.meta.url) === process.argv[1] && process.argv[2] === "--child") {
  const rounds = Number(process.argv[3] ?? 3);
  const variants = Number(process.argv[4] ?? REPORT_VARIANTS);
  reportChild(Number.isInteger(rounds) && rounds > 0 ? rounds : 3, Number.isInteger(variants) && variants > 0 ? variants : REPORT_VARIANTS).catch((err) => {
    process.stderr.write(String(err) + "\n");
    process.exitCode = 1;
  });
}
