/**
 * `gapwatch audit --layouts A-B`: the static checks on every layout of a family, summarized: how many
 * layouts have a critical finding (and which checks), and the worst layout (highest severity, then
 * highest regretNorm, then lowest layout number) with its findings. Document of `--json`:
 *
 *   { env, reward, layouts, critical, warning, perLayout: [{layout, regretNorm, critical, warning, checks}],
 *     worst: {layout, regretNorm, findings: [{check, severity, message}]} }
 */
import { runAuditDetailed } from "../audit/run.js";
import { SEVERITY_RANK, type Finding } from "../audit/findings.js";
import { loadFiniteVariant, splitLayout, withLayout } from "../env/index.js";

export interface AuditLayoutsConfig {
  env: string;
  reward?: string;
  layouts: number[];
  maxRisk?: number;
  sensitivity?: boolean;
  maxStates?: number;
}

export interface LayoutAuditRow {
  layout: number;
  regretNorm: number;
  critical: number;
  warning: number;
  /** Checks with a critical finding on this layout. */
  checks: string[];
}

export interface AuditLayoutsDoc {
  env: string;
  reward: string;
  layouts: number[];
  /** Layouts with at least one critical / warning finding. */
  critical: number;
  warning: number;
  perLayout: LayoutAuditRow[];
  worst: { layout: number; regretNorm: number; findings: Pick<Finding, "check" | "severity" | "message">[] } | null;
}

export async function runAuditLayouts(cfg: AuditLayoutsConfig): Promise<{ doc: AuditLayoutsDoc; findings: Finding[] }> {
  const base = splitLayout(cfg.env).base;
  const rows: LayoutAuditRow[] = [];
  let reward = cfg.reward ?? "";
  let worst: { row: LayoutAuditRow; findings: Finding[]; rank: number } | null = null;
  for (const n of cfg.layouts) {
    const { model, variant } = await loadFiniteVariant(withLayout(base, n), cfg.reward, { command: "audit", maxStates: cfg.maxStates });
    reward = variant.name;
    const r = runAuditDetailed(model, variant, { maxRisk: cfg.maxRisk, sensitivity: cfg.sensitivity });
    const count = (s: Finding["severity"]) => r.findings.filter((f) => f.severity === s).length;
    const row: LayoutAuditRow = { layout: n, regretNorm: Math.max(0, r.regretNorm), critical: count("critical"), warning: count("warning"), checks: [...new Set(r.findings.filter((f) => f.severity === "critical").map((f) => f.check))] };
    rows.push(row);
    const rank = Math.max(...r.findings.map((f) => SEVERITY_RANK[f.severity]), SEVERITY_RANK.info);
    if (!worst || rank > worst.rank || (rank === worst.rank && row.regretNorm > worst.row.regretNorm)) worst = { row, findings: r.findings, rank };
  }
  const doc: AuditLayoutsDoc = {
    env: base,
    reward,
    layouts: cfg.layouts,
    critical: rows.filter((r) => r.critical > 0).length,
    warning: rows.filter((r) => r.warning > 0).length,
    perLayout: rows,
    worst: worst ? { layout: worst.row.layout, regretNorm: worst.row.regretNorm, findings: worst.findings.filter((f) => f.severity !== "info").map(({ check, severity, message }) => ({ check, severity, message })) } : null,
  };
  return { doc, findings: worst?.findings ?? [] };
}
