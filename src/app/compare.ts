/** `gapwatch compare`: the sweep, the optional CSV and HTML report, and the all-runs-failed error. */
import { EXIT, GapwatchError } from "../errors.js";
import { comparisonCsv } from "../batch/aggregate.js";
import { runCompare, writeComparison, type CompareConfig, type CompareHooks } from "../batch/compare.js";
import { collectPlan, makePlan, planJobs, readPlan, writePlan, type PlanSweep } from "../batch/sweep-plan.js";
import { openIndex } from "../store/index-db.js";
import { writeReport } from "../report/write.js";
import { writeFileAtomic } from "../store/atomic.js";

export interface CompareCommandConfig extends CompareConfig {
  /** Also write the per-run CSV to this file. */
  csv?: string;
  /** Also write the comparison's HTML report: true for `<comparison-dir>/report.html`, or a file. */
  report?: boolean | string;
}

/** Compare; `doc` is what `compare --json` prints, `result` the whole comparison, `report` the HTML file or null. */
export async function runCompareCommand(cfg: CompareCommandConfig, hooks: CompareHooks = {}) {
  const { csv, report: reportOpt, ...config } = cfg;
  const result = await runCompare(config, hooks);
  if (csv) writeFileAtomic(csv, comparisonCsv(cfg.env, result.records));
  if (result.doc.runDirs.length === 0 && result.stats.failed.length > 0) {
    const f = result.stats.failed[0];
    throw new GapwatchError(f.code, `every run failed; first: ${f.message}`, { where: f.where, exitCode: EXIT.badInput });
  }
  const report = reportOpt ? await writeReport(result.dir, { out: typeof reportOpt === "string" ? reportOpt : undefined }) : null;
  return { result, report, doc: report ? { ...result.stats, report } : result.stats };
}

/** `compare --plan FILE`: write the sweep's plan (every run's config and id) without running it. */
export async function writePlanCommand(sweep: PlanSweep, file: string) {
  const plan = await makePlan(sweep);
  writePlan(file, plan);
  return { plan, doc: { plan: file, id: plan.id, runs: plan.runs.length } };
}

/** What `compare --collect --fail-on` can gate on. */
export type CollectGate = "missing" | "failed" | "decoupled";

export interface CollectConfig {
  /** The runs folder the plan's tasks wrote to. */
  runsDir: string;
  /** The plan file. */
  plan: string;
  failOn?: CollectGate[];
  csv?: string;
  report?: boolean | string;
}

/**
 * `compare --collect DIR`: the comparison (statistics, CSV, report, index rows) from the plan's
 * finished run folders; the plan's missing runs by index; `gate` names the first `--fail-on` kind hit.
 */
export async function collectCommand(cfg: CollectConfig) {
  const plan = readPlan(cfg.plan);
  const { outcomes, missing } = collectPlan(plan, cfg.runsDir);
  const index = openIndex(cfg.runsDir);
  let result;
  try {
    for (const o of outcomes) if (o.ok) index.recordRun(o.result);
    result = writeComparison(plan.sweep, planJobs(plan), outcomes, cfg.runsDir, "plan", index);
  } finally {
    index.close();
  }
  if (cfg.csv) writeFileAtomic(cfg.csv, result.csv);
  const decoupled = result.records.some((r) => r.ok && r.verdict === "decoupled");
  const hits: Record<CollectGate, boolean> = { missing: missing.length > 0, failed: result.stats.failed.length > missing.length, decoupled };
  const gate = (cfg.failOn ?? []).find((g) => hits[g]) ?? null;
  const report = cfg.report ? await writeReport(result.dir, { out: typeof cfg.report === "string" ? cfg.report : undefined }) : null;
  return { result, missing, gate, report, doc: { ...result.stats, missing, ...(report ? { report } : {}) } };
}
