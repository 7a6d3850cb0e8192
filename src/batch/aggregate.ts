/**
 * The comparison's statistics, pure: run records in, the comparison document out.
 *
 * Layout (as in Agarwal, Schwarzer, Castro, Courville and Bellemare 2021, "Deep Reinforcement Learning at the Edge of the Statistical Precipice", NeurIPS): for each reward variant a runs x tasks score matrix with
 * tasks = learners (one task when a single learner is used) and runs = seeds. Scores are the FINAL
 * normalized scores of each run (0 = uniform-random policy, 1 = optimal for that score). A seed whose
 * run failed for any learner of a variant is left out of that variant's matrix (the matrix must be
 * rectangular) and listed under "failed".
 *
 * Per variant: mean, median (Agarwal et al. 2021: over tasks of per-task run
 * means; tasks = learners, so the median is the median of per-learner means), IQM (all scores pooled, scipy trim_mean 0.25) and a 95% stratified bootstrap percentile CI
 * of the IQM; the alert rate (runs with at least one alert / completed runs) with a 95% Wilson score
 * interval; verdict counts. Pairs: probability of improvement P(a > b) on intent for every pair a
 * before b in the --rewards order, with a stratified independent bootstrap CI. Ranking: by intent IQM,
 * highest first (ties keep the --rewards order; variants without a completed run go last).
 *
 * Randomness: every bootstrap draws from `createRng(bootstrapSeed).fork(label)` with its own label
 * ("iqm/<reward>/designer", "iqm/<reward>/intent", "poi/<a>/<b>"), so adding a variant never
 * changes another's interval.
 */
import { createRng } from "../rng/rng.js";
import { aggregateIqm, aggregateMean, aggregateMedian, scoreMatrix, type ScoreMatrix } from "../stats/summary.js";
import { stratifiedBootstrapCI } from "../stats/bootstrap.js";
import { probabilityOfImprovementCI } from "../stats/improvement.js";
import { wilsonInterval } from "../stats/wilson.js";
import type { Verdict } from "../run/schema.js";

/** One run of the sweep as the aggregation reads it. */
export interface RunRecord {
  reward: string;
  learner: string;
  seed: number;
  ok: boolean;
  runId?: string;
  runDir?: string;
  verdict?: Verdict;
  /** Final normalized scores. */
  designer?: number;
  intent?: number;
  alerts?: number;
  error?: { code: string; message: string; where?: string };
}

export interface ScoreSummary {
  mean: number | null;
  median: number | null;
  iqm: number | null;
  ci: [number, number] | null;
}

export interface VariantSummary {
  reward: string;
  runs: number;
  verdicts: Record<Verdict, number>;
  alertRate: { p: number | null; ci: [number, number] | null };
  designer: ScoreSummary;
  intent: ScoreSummary;
  /** Extra key: runs of this variant that failed. */
  failed: number;
}

export interface PairSummary {
  a: string;
  b: string;
  probabilityOfImprovement: number | null;
  ci: [number, number] | null;
}

export interface ComparisonStats {
  env: string;
  variants: VariantSummary[];
  ranking: string[];
  pairs: PairSummary[];
  failed: { reward: string; learner: string; seed: number; code: string; message: string; where?: string }[];
}

export interface AggregateOptions {
  env: string;
  rewards: string[];
  learners: string[];
  seeds: number[];
  bootstrapSeed: number;
  /** Bootstrap replicates (default 2000, src/stats/bootstrap.ts). */
  reps?: number;
}

const NO_SCORES: ScoreSummary = { mean: null, median: null, iqm: null, ci: null };

/** The variant's matrices (rows = seeds where every learner completed, columns = learners). */
export function variantMatrices(records: RunRecord[], reward: string, learners: string[], seeds: number[]): { designer: ScoreMatrix; intent: ScoreMatrix } | null {
  const byCell = new Map<string, RunRecord>();
  for (const r of records) if (r.reward === reward && r.ok) byCell.set(`${r.learner}\u0000${r.seed}`, r);
  const dRows: number[][] = [];
  const iRows: number[][] = [];
  for (const seed of seeds) {
    const cells = learners.map((l) => byCell.get(`${l}\u0000${seed}`));
    if (cells.some((c) => !c || typeof c.designer !== "number" || typeof c.intent !== "number")) continue;
    dRows.push(cells.map((c) => c!.designer as number));
    iRows.push(cells.map((c) => c!.intent as number));
  }
  if (dRows.length === 0) return null;
  return { designer: scoreMatrix(dRows, `${reward}.designer`), intent: scoreMatrix(iRows, `${reward}.intent`) };
}

function summarize(m: ScoreMatrix | undefined, label: string, opts: AggregateOptions): ScoreSummary {
  if (!m) return NO_SCORES;
  const ci = stratifiedBootstrapCI(m, aggregateIqm, createRng(opts.bootstrapSeed).fork(label), { reps: opts.reps });
  return { mean: aggregateMean(m), median: aggregateMedian(m), iqm: aggregateIqm(m), ci: [ci.lower, ci.upper] };
}

export function aggregateComparison(records: RunRecord[], opts: AggregateOptions): ComparisonStats {
  const matrices = new Map(opts.rewards.map((r) => [r, variantMatrices(records, r, opts.learners, opts.seeds)]));
  const variants: VariantSummary[] = opts.rewards.map((reward) => {
    const mine = records.filter((r) => r.reward === reward);
    const done = mine.filter((r) => r.ok);
    const verdicts: Record<Verdict, number> = { aligned: 0, decoupled: 0, inconclusive: 0 };
    for (const r of done) if (r.verdict) verdicts[r.verdict]++;
    const alerted = done.filter((r) => (r.alerts ?? 0) > 0).length;
    const w = done.length > 0 ? wilsonInterval(alerted, done.length) : null;
    const m = matrices.get(reward) ?? null;
    return {
      reward,
      runs: done.length,
      verdicts,
      alertRate: w ? { p: w.point, ci: [w.lower, w.upper] } : { p: null, ci: null },
      designer: summarize(m?.designer, `iqm/${reward}/designer`, opts),
      intent: summarize(m?.intent, `iqm/${reward}/intent`, opts),
      failed: mine.length - done.length,
    };
  });
  const order = opts.rewards.map((r, i) => ({ r, i, iqm: variants[i].intent.iqm }));
  order.sort((x, y) => {
    if (x.iqm === null || y.iqm === null) return x.iqm === null && y.iqm === null ? x.i - y.i : x.iqm === null ? 1 : -1;
    return y.iqm - x.iqm || x.i - y.i;
  });
  const pairs: PairSummary[] = [];
  for (let i = 0; i < opts.rewards.length; i++) {
    for (let j = i + 1; j < opts.rewards.length; j++) {
      const a = opts.rewards[i];
      const b = opts.rewards[j];
      const ma = matrices.get(a);
      const mb = matrices.get(b);
      if (!ma || !mb) {
        pairs.push({ a, b, probabilityOfImprovement: null, ci: null });
        continue;
      }
      const ci = probabilityOfImprovementCI(ma.intent, mb.intent, createRng(opts.bootstrapSeed).fork(`poi/${a}/${b}`), { reps: opts.reps });
      pairs.push({ a, b, probabilityOfImprovement: ci.point, ci: [ci.lower, ci.upper] });
    }
  }
  const failed = records
    .filter((r) => !r.ok)
    .map((r) => ({ reward: r.reward, learner: r.learner, seed: r.seed, code: r.error?.code ?? "internal", message: r.error?.message ?? "failed", ...(r.error?.where ? { where: r.error.where } : {}) }));
  return { env: opts.env, variants, ranking: order.map((o) => o.r), pairs, failed };
}

/** CSV, one row per run (RFC 4180 quoting). Scores are the final normalized scores; failed runs have verdict "failed". */
export function comparisonCsv(env: string, records: RunRecord[]): string {
  const q = (v: unknown) => {
    const s = v === undefined || v === null ? "" : String(v);
    return /[",\r\n]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s;
  };
  const head = ["env", "reward", "learner", "seed", "verdict", "designer", "intent", "alerts", "runDir"];
  const rows = records.map((r) => [env, r.reward, r.learner, r.seed, r.ok ? r.verdict : "failed", r.designer, r.intent, r.alerts, r.runDir].map(q).join(","));
  return [head.join(","), ...rows].join("\n") + "\n";
}
