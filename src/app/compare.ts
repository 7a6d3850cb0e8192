/** `gapwatch compare`: the sweep, the optional CSV and HTML report, and the all-runs-failed error. */
import { EXIT, GapwatchError } from "../errors.js";
import { comparisonCsv } from "../batch/aggregate.js";
import { runCompare, type CompareConfig, type CompareHooks } from "../batch/compare.js";
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
