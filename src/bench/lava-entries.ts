/** The lava-field entries of the benchmark: value iteration and tabular Q-learning, ours beside the peers. */
import { QL_SEED, QL_STEPS } from "./lava-run.js";
import { ENGINE_NAME, fmtRate, fmtRatio, fmtSec, measure, oursRow, PAR_NAME, PAR_THREADS, printTable, WARM_NAME, type BenchEntry, type WorkloadResult } from "./harness.js";

export const viEntry: BenchEntry = {
  name: "vi",
  title: "value iteration (generic valueIteration sweeps on the lava FiniteModel)",
  run(ctx) {
    const sizes = ctx.opts.quick ? [32, 128] : [32, 128, 512];
    let ok = true;
    const summary: string[] = [];
    let last: WorkloadResult | undefined;
    for (const n of sizes) {
      const r = measure(ctx, `vi ${n}x${n}  (timed: sweeps only)`, { kind: "vi", W: n, H: n });
      printTable(r);
      ok = ok && r.rows.every((x) => x.ok);
      last = r;
    }
    const o = last && oursRow(last);
    if (last && o) {
      const n = last.workload.W;
      const vsNp = Number.isFinite(o.vsNumpy) ? `${fmtRatio(o.vsNumpy)} numpy-shift (target <= x1.00: ${o.vsNumpy <= 1 ? "met" : "NOT met"})` : "numpy n/a";
      const vsC = Number.isFinite(o.vsC) ? `${fmtRatio(o.vsC)} C (target <= x3.00: ${o.vsC <= 3 ? "met" : "NOT met"})` : "C n/a";
      summary.push(`vi ${n}x${n}: ours ${fmtSec(o.seconds)} s = ${vsC}; ${vsNp}`);
    }
    const eng = last?.rows.find((x) => x.impl === ENGINE_NAME);
    if (last && eng) {
      const n = last.workload.W;
      const v = eng.vsC;
      const verdict = Number.isFinite(v) ? `target <= x1.00: ${v <= 1 ? "met" : "NOT met"}; stretch <= x0.20: ${v <= 0.2 ? "met" : "NOT met"}` : "C n/a";
      summary.push(`vi ${n}x${n}: ${ENGINE_NAME} (default solver; plan + solve to 1e-10) ${fmtSec(eng.seconds)} s = ${fmtRatio(v)} C's time for its sweeps (${verdict})`);
    }
    const par = last?.rows.find((x) => x.impl === PAR_NAME);
    if (last && par) {
      const n = last.workload.W;
      summary.push(
        `vi ${n}x${n}: ${PAR_NAME} (${PAR_THREADS} threads, opt-in; not the single-thread target) ${fmtSec(par.seconds)} s = ${fmtRatio(par.vsC)} C, ${fmtRatio(par.vsNumpy)} numpy-shift`,
      );
    }
    return { ok, summary };
  },
};

export const qlEntry: BenchEntry = {
  name: "ql",
  title: "tabular Q-learning (policies/qlearning.ts trainQLearning on the lava FiniteModel)",
  run(ctx) {
    const r = measure(ctx, `ql 32x32 ${QL_STEPS} steps  (timed: the training call)`, { kind: "ql", W: 32, H: 32, steps: QL_STEPS, seed: QL_SEED });
    printTable(r);
    const o = oursRow(r);
    const summary: string[] = [];
    if (o && Number.isFinite(o.vsC)) {
      const speed = 1 / o.vsC;
      summary.push(`ql 32x32: ours ${fmtRate(QL_STEPS / o.seconds)} steps/s = ${speed.toFixed(2)}x C's speed (target >= 0.50: ${speed >= 0.5 ? "met" : "NOT met"})`);
    }
    const warm = r.rows.find((x) => x.impl === WARM_NAME);
    if (warm && Number.isFinite(warm.vsC)) {
      summary.push(`ql 32x32: ${WARM_NAME} (after an untimed warm-up; not the cold target) ${fmtRate(QL_STEPS / warm.seconds)} steps/s = ${(1 / warm.vsC).toFixed(2)}x C's speed`);
    }
    return { ok: r.rows.every((x) => x.ok), summary };
  },
};
