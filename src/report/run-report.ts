/**
 * The report of one training run: verdict and reason up top, designer vs intent over checkpoints
 * (normalized and raw) with numbered alert markers and the alert list, the learned route on the map
 * when the environment is at hand, the audit and pressure sections when their files are present,
 * the manifest to reproduce it, and the caution.
 */
import type { FiniteModel } from "../model/types.js";
import type { RunResult } from "../run/schema.js";
import { drawingBlock, renderAuditSection } from "./audit.js";
import { chartFigure, curvesSpec, rawCurvesSpec, type AlertMark } from "./charts.js";
import type { RunReportData } from "./data.js";
import { esc } from "./escape.js";
import { renderExternalReport } from "./external-report.js";
import { page } from "./page.js";
import { renderPressureSection } from "./pressure.js";
import { alertList, caution, facts, footer, manifestBlock, num, pct, scoreKey, sectionOpen, verdictBand, type ListedAlert } from "./sections.js";
import { likelyPath } from "../model/likely-path.js";

export function numberedAlerts(run: Pick<RunResult, "alerts">, prefix = ""): ListedAlert[] {
  return run.alerts.map((a, i) => ({ label: `${prefix}${i + 1}`, step: a.step, kind: a.kind, magnitude: a.magnitude, message: a.message }));
}

/** The greedy policy of policy.json (action names per state) as action indices, or null. */
export function policyIndices(model: FiniteModel, greedy: readonly (string | null)[] | null | undefined): Int32Array | null {
  if (!greedy || greedy.length !== model.nStates) return null;
  const out = new Int32Array(model.nStates);
  for (let s = 0; s < model.nStates; s++) {
    const name = greedy[s];
    out[s] = name === null ? -1 : model.actions.indexOf(name);
  }
  return out;
}

/** The two curve charts and the alert list (shared with the comparison report's per-run detail). */
export async function curvesBlock(run: RunResult, alerts: ListedAlert[]): Promise<string> {
  const marks: AlertMark[] = alerts.map((a) => ({ label: a.label, step: a.step, kind: a.kind }));
  const norm = await chartFigure(
    "curves",
    curvesSpec(run.checkpoints, marks),
    `Scores of the learner's greedy policy at each of ${run.checkpoints.length} checkpoints, normalized so that 0 is the uniform-random policy and 1 the optimal policy for that score. The gap between the lines is what the designer reward fails to capture.`,
  );
  const raw = await chartFigure(
    "curves-raw",
    rawCurvesSpec(run.checkpoints, run.references ?? null, marks),
    "The same scores in their own units (expected discounted return from the start), with the optimal and uniform-random references that the normalization uses.",
  );
  return `${scoreKey(alerts.length > 0)}${norm}${raw}`;
}

export async function renderRunReport(data: RunReportData): Promise<string> {
  const { run } = data;
  const cfg = run.config;
  const alerts = numberedAlerts(run);
  const generatedAt = data.generatedAt ?? new Date().toISOString();
  if (run.source) return renderExternalReport(run, alerts, { packageVersion: data.manifest?.packageVersion, generatedAt });
  let n = 0;
  const parts: string[] = [];
  const named = data.rewardName && data.rewardName !== cfg.reward ? data.rewardName : null;
  parts.push(`<header><div class="brand">gapwatch · reward review</div><h1>${esc(named ?? cfg.reward)} <span style="font-weight:400;color:var(--muted)">on</span> ${esc(cfg.env)}</h1>
<p class="sub">${named ? `Reward file <span class="mono">${esc(cfg.reward)}</span> · ` : ""}Training run <span class="mono">${esc(run.runId)}</span> · learner ${esc(cfg.learner)} · seed ${esc(cfg.seed)} · status ${esc(run.status)}</p></header>`);
  parts.push(verdictBand(run.verdict, run.reason));
  const f = run.final;
  parts.push(
    facts([
      { value: pct(f?.designerNorm), label: "designer return, of optimal" },
      { value: pct(f?.intentNorm), label: "intent, of achievable" },
      { value: f ? num(f.gap, 2) : "–", label: "gap (normalized)" },
      { value: String(run.alerts.length), label: run.alerts.length === 1 ? "alert" : "alerts" },
      { value: run.firstAlertStep === null ? "–" : String(run.firstAlertStep), label: "first alert at step" },
      { value: run.steps.toLocaleString("en-US"), label: `steps · ${run.episodes.toLocaleString("en-US")} episodes` },
    ]),
  );
  parts.push(`${sectionOpen(++n, "Designer return vs intent over training", "curves")}${await curvesBlock(run, alerts)}<h3>Alerts</h3>${alertList(alerts)}</section>`);

  const model = data.model ?? null;
  const policy = model ? policyIndices(model, data.policy ?? null) : null;
  if (model && policy) {
    const path = likelyPath(model, policy);
    const drawing = drawingBlock(model, [{ kind: "route", label: "learned route (most likely outcome of each move)", states: path.states }], "learned-route");
    if (drawing) {
      parts.push(`${sectionOpen(++n, "Where the learned policy goes", "route")}<p>The final greedy policy followed from the most likely start, one most likely outcome per move${
        path.states.length > 1 && new Set(path.states).size < path.states.length ? "; it revisits states, so it circles instead of finishing" : ""
      }.</p>${drawing}</section>`);
    }
  }
  if (data.audit) parts.push(`${sectionOpen(++n, "Audit findings", "audit")}${renderAuditSection(data.audit, model)}</section>`);
  if (data.pressure) parts.push(`${sectionOpen(++n, "Optimization pressure", "pressure")}${await renderPressureSection(data.pressure)}</section>`);
  parts.push(`${sectionOpen(++n, "Reproduce this run", "manifest")}${manifestBlock(data.manifest, cfg)}</section>`);
  parts.push(caution());
  parts.push(footer(data.manifest?.packageVersion, generatedAt));
  return page({
    title: `gapwatch · ${named ?? cfg.reward} on ${cfg.env} · ${run.verdict}`,
    body: parts.join("\n"),
    data: {
      format: "gapwatch-report-data/1",
      kind: "run",
      runId: run.runId,
      env: cfg.env,
      reward: cfg.reward,
      rewardName: named,
      verdict: run.verdict,
      reason: run.reason,
      alerts: run.alerts,
      checkpoints: run.checkpoints.map((c) => ({ step: c.step, designerNorm: c.designerNorm, intentNorm: c.intentNorm, designer: c.designer, intent: c.intent })),
    },
  });
}
