/**
 * The report of an EXTERNAL run (`gapwatch ingest`): verdict (with the scale it was judged on),
 * designer vs intent normalized over the log's checkpoints with the alerts, the source block (files,
 * sizes, content hashes, mapping, ranges, window), what the verdict means on noisy data, and the caution.
 */
import type { RunResult } from "../run/schema.js";
import { chartFigure, curvesSpec, type AlertMark } from "./charts.js";
import { esc } from "./escape.js";
import { page } from "./page.js";
import { alertList, caution, facts, footer, kvTable, pct, scoreKey, sectionOpen, verdictBand, type ListedAlert } from "./sections.js";

const rangeText = (r: { low: number; high: number } | null): string => (r === null ? "none: relative scale (0 = first checkpoint, 1 = best level this run reached)" : `${r.low} : ${r.high}`);

export async function renderExternalReport(run: RunResult, alerts: ListedAlert[], opts: { packageVersion?: string; generatedAt: string }): Promise<string> {
  const src = run.source!;
  const relative = run.relative ?? false;
  let n = 0;
  const parts: string[] = [];
  parts.push(`<header><div class="brand">gapwatch · external training log</div><h1>${esc(src.mapping.designer)} <span style="font-weight:400;color:var(--muted)">vs intent</span> ${esc(src.mapping.intent)}</h1>
<p class="sub">External run <span class="mono">${esc(run.runId)}</span> · ${esc(src.format)} · ${src.files.length} file(s) · status ${esc(run.status)}${relative ? " · relative scale" : ""}</p></header>`);
  parts.push(verdictBand(run.verdict, run.reason));
  const f = run.final;
  parts.push(
    facts([
      { value: pct(f?.external?.designerLevel ?? null), label: relative ? "designer level (relative)" : "designer level, of intended" },
      { value: pct(f?.external?.intentLevel ?? null), label: relative ? "intent level (relative)" : "intent level, of intended" },
      { value: String(run.checkpoints.length), label: "checkpoints" },
      { value: String(run.alerts.length), label: run.alerts.length === 1 ? "alert" : "alerts" },
      { value: run.firstAlertStep === null ? "–" : String(run.firstAlertStep), label: "first alert at step" },
    ]),
  );
  const marks: AlertMark[] = alerts.map((a) => ({ label: a.label, step: a.step, kind: a.kind }));
  const chart = await chartFigure(
    "curves",
    curvesSpec(run.checkpoints, marks),
    relative
      ? "Designer and intent scores of each checkpoint on the relative scale (no range given): 0 is the run's first checkpoint, 1 the best pooled level reached so far, each point on the scale known at that checkpoint."
      : "Designer and intent scores of each checkpoint normalized with the given ranges: 0 is what a random policy scores, 1 the intended behaviour.",
  );
  parts.push(`${sectionOpen(++n, "Designer score vs intent over the log", "curves")}${scoreKey(alerts.length > 0)}${chart}<h3>Alerts</h3>${alertList(alerts)}</section>`);
  const files = `<table class="data"><thead><tr><th>file</th><th>bytes</th><th>SHA-256</th></tr></thead><tbody>${src.files
    .map((x) => `<tr><td class="mono">${esc(x.path)}</td><td>${x.bytes}</td><td class="mono">${esc(x.sha256)}</td></tr>`)
    .join("")}</tbody></table>`;
  const how = kvTable({
    format: src.format,
    "designer series": src.mapping.designer,
    "intent series": src.mapping.intent,
    "step column": src.mapping.step ?? "default",
    run: src.mapping.run ?? "the only one",
    "designer range": rangeText(src.ranges.designer),
    "intent range": rangeText(src.ranges.intent),
    window: src.window === null ? "none (the log holds checkpoints)" : `${src.window} steps`,
    rolling: src.rolling === null ? "no" : `mean of the last ${src.rolling} episodes`,
  });
  parts.push(`${sectionOpen(++n, "Source", "source")}${files}${how}</section>`);
  parts.push(`${sectionOpen(++n, "What the verdict means on noisy data", "noise")}<p>Each checkpoint of a training log is a noisy mean of a few episodes. The monitor pools three checkpoints into a level, estimates the noise from the log's spread or from the series itself, and alerts only on falls that are large (at least 0.15 normalized) and significant. A fall that is real but slow, or a log with few episodes per checkpoint, can go undetected; an alert is strong evidence of decoupling, and no alert is weaker evidence that there is none.${
    relative ? " Without ranges the scale is relative to this run, so an intent score that never rose cannot be judged." : ""
  }</p></section>`);
  parts.push(caution());
  parts.push(footer(opts.packageVersion, opts.generatedAt));
  return page({
    title: `gapwatch · external · ${src.mapping.designer} vs ${src.mapping.intent} · ${run.verdict}`,
    body: parts.join("\n"),
    data: {
      format: "gapwatch-report-data/1",
      kind: "external-run",
      runId: run.runId,
      source: src,
      verdict: run.verdict,
      reason: run.reason,
      relative,
      alerts: run.alerts,
      checkpoints: run.checkpoints.map((c) => ({ step: c.step, designerNorm: c.designerNorm, intentNorm: c.intentNorm, designer: c.designer, intent: c.intent })),
    },
  });
}
