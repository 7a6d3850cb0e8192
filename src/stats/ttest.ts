/**
 * Two-sample t statistics from summary statistics or raw samples (NIST e-Handbook section 1.3.5.3):
 * - pooled (equal variances): s_p^2 = ((n1-1)s1^2 + (n2-1)s2^2)/(n1+n2-2), t = (m1-m2)/(s_p sqrt(1/n1+1/n2)),
 *   df = n1 + n2 - 2;
 * - Welch (unequal variances): se = sqrt(s1^2/n1 + s2^2/n2), t = (m1-m2)/se, Welch-Satterthwaite
 *   df = se^4 / ((s1^2/n1)^2/(n1-1) + (s2^2/n2)^2/(n2-1)).
 * Two-sided p-values from the Student t distribution (student.ts), df may be fractional.
 */
import { InputError } from "../errors.js";
import { studentTwoSidedP } from "./student.js";
import { mean, sampleSd, type Sample } from "./summary.js";

export interface GroupSummary {
  readonly n: number;
  readonly mean: number;
  /** Sample standard deviation (divisor n - 1). */
  readonly sd: number;
}

export type TTestMethod = "welch" | "pooled";

export interface TStatistic {
  readonly method: TTestMethod;
  readonly t: number;
  readonly df: number;
  /** Standard error of the difference of means. */
  readonly se: number;
  /** Two-sided p-value P(|T_df| > |t|). */
  readonly p: number;
  /** Pooled standard deviation (pooled method only). */
  readonly sp?: number;
}

export function summarize(xs: Sample): GroupSummary {
  return { n: xs.length, mean: mean(xs), sd: sampleSd(xs) };
}

function check(g: GroupSummary, where: string): void {
  if (!Number.isInteger(g.n) || g.n < 2 || !(g.sd >= 0) || !Number.isFinite(g.mean)) {
    throw new InputError("stats.ttest", `a group needs n >= 2, finite mean and sd >= 0; got n=${g.n}, mean=${g.mean}, sd=${g.sd}`, where);
  }
}

export function welchT(a: GroupSummary, b: GroupSummary): TStatistic {
  check(a, "a");
  check(b, "b");
  const va = (a.sd * a.sd) / a.n;
  const vb = (b.sd * b.sd) / b.n;
  const se = Math.sqrt(va + vb);
  const df = ((va + vb) * (va + vb)) / ((va * va) / (a.n - 1) + (vb * vb) / (b.n - 1));
  const t = (a.mean - b.mean) / se;
  return { method: "welch", t, df, se, p: studentTwoSidedP(t, df) };
}

export function pooledT(a: GroupSummary, b: GroupSummary): TStatistic {
  check(a, "a");
  check(b, "b");
  const df = a.n + b.n - 2;
  const sp = Math.sqrt(((a.n - 1) * a.sd * a.sd + (b.n - 1) * b.sd * b.sd) / df);
  const se = sp * Math.sqrt(1 / a.n + 1 / b.n);
  const t = (a.mean - b.mean) / se;
  return { method: "pooled", t, df, se, p: studentTwoSidedP(t, df), sp };
}

/** t statistic of two raw samples by `method` (default "welch"). */
export function twoSampleT(x: Sample, y: Sample, method: TTestMethod = "welch"): TStatistic {
  const a = summarize(x);
  const b = summarize(y);
  return method === "pooled" ? pooledT(a, b) : welchT(a, b);
}
