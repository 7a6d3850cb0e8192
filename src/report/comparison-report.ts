/**
 * The report of a comparison of reward variants (comparison.json from `gapwatch compare`, plus the
 * runs it was computed from): the verdicts per variant up top, interquartile means with bootstrap
 * intervals, alert rates, the pairwise probability-of-improvement matrix, small multiples of every
 * variant's curves, and per-run detail with each alert.
 */
import type { RunResult } from "../run/schema.js";
import { renderAuditSection } from "./audit.js";
import { alertRateSpec, chartFigure, intervalsSpec, pairsSpec, smallMultiplesSpec, type MultiRow, type PairCell, type VariantInterval } from "./charts.js";
import { interval, type ComparisonDoc, type ComparisonReportData } from "./data.js";
import { esc, token } from "./escape.js";
import { page } from "./page.js";
import { renderPressureSection } from "./pressure.js";
import { numberedAlerts } from "./run-report.js";
import { wordsTable } from "./evidence.js";
import { alertList, caution, fixed, footer, kvTable, pct, scoreKey, sectionOpen, verdictBand } from "./sections.js";

type Variant = ComparisonDoc["variants"][number];
const VERDICTS = ["decoupled", "inconclusive", "aligned"] as const;

/** Verdict counts of a variant: from `verdicts` ({name: count} or a list), else from its runs. */
export function verdictCounts(v: Variant, runs: RunResult[]): Record<string, number> {
  const out: Record<string, number> = {};
  const add = (k: unknown, c = 1) => {
    const key = String(k);
    out[key] = (out[key] ?? 0) + c;
  };
  const src = v.verdicts;
  if (Array.isArray(src)) {
    for (const x of src) add(x && typeof x === "object" ? (x as { verdict?: unknown }).verdict : x);
  } else if (src && typeof src === "object") {
    for (const [k, c] of Object.entries(src)) if (typeof c === "number") add(k, c);
  }
  if (Object.keys(out).length === 0) for (const r of runs) add(r.verdict);
  return out;
}

/** The verdict most runs of a variant got (ties go to the more cautious: decoupled, then inconclusive). */
export function majority(counts: Record<string, number>): string {
  let best = "inconclusive";
  let n = -1;
  for (const v of VERDICTS) if ((counts[v] ?? 0) > n) [best, n] = [v, counts[v] ?? 0];
  return n > 0 ? best : "inconclusive";
}

/** Variant names in ranking order (the document's `ranking` when given, else by intent IQM). */
export function rankingOrder(doc: ComparisonDoc): string[] {
  const names = doc.variants.map((v) => v.reward);
  const given = Array.isArray(doc.ranking)
    ? doc.ranking.map((r) => (typeof r === "string" ? r : r && typeof r === "object" ? String((r as { reward?: unknown; name?: unknown }).reward ?? (r as { name?: unknown }).name) : "")).filter((r) => names.includes(r))
    : [];
  const rest = names.filter((n) => !given.includes(n)).sort((a, b) => score(doc, b) - score(doc, a));
  return [...new Set([...given, ...rest])];
}

function score(doc: ComparisonDoc, name: string): number {
  const v = doc.variants.find((x) => x.reward === name);
  const s = v?.intent?.iqm ?? v?.intent?.mean;
  return typeof s === "number" && Number.isFinite(s) ? s : -Infinity;
}

/** The full matrix: given pairs, and their complements P(b over a) = 1 - P(a over b) where missing. */
export function pairCells(doc: ComparisonDoc): PairCell[] {
  const cells = new Map<string, PairCell>();
  for (const p of doc.pairs ?? []) {
    if (typeof p.probabilityOfImprovement !== "number") continue;
    cells.set(`${p.a}\u0000${p.b}`, { a: p.a, b: p.b, p: p.probabilityOfImprovement, derived: false });
  }
  for (const c of [...cells.values()]) {
    const k = `${c.b}\u0000${c.a}`;
    if (!cells.has(k)) cells.set(k, { a: c.b, b: c.a, p: 1 - c.p, derived: true });
  }
  return [...cells.values()];
}

function runsOf(name: string, runs: RunResult[]): RunResult[] {
  return runs.filter((r) => r.config.reward === name);
}

/** A score with its interval, every number with two decimals (one format across the table). */
function ivText(point: unknown, ci: unknown): string {
  const [lo, hi] = interval(ci);
  return `${fixed(point, 2)}${Number.isFinite(lo) ? ` [${fixed(lo, 2)}, ${fixed(hi, 2)}]` : ""}`;
}

export async function renderComparisonReport(data: ComparisonReportData): Promise<string> {
  const doc = data.comparison;
  const order = rankingOrder(doc);
  const byName = new Map(doc.variants.map((v) => [v.reward, v]));
  const generatedAt = data.generatedAt ?? new Date().toISOString();
  const env = doc.env ?? data.runs[0]?.config.env ?? "environment";
  const counts = new Map(order.map((name) => [name, verdictCounts(byName.get(name)!, runsOf(name, data.runs))]));
  const maj = new Map(order.map((name) => [name, majority(counts.get(name)!)]));
  const decoupled = order.filter((n) => maj.get(n) === "decoupled");
  const aligned = order.filter((n) => maj.get(n) === "aligned");
  const best = order[0];
  // The band never calls a comparison decoupled when its best variants stay aligned: "mixed" then, and
  // the reason names the variants that decouple.
  const overall =
    decoupled.length > 0 ? (best !== undefined && maj.get(best) === "aligned" ? "mixed" : "decoupled") : aligned.length === order.length && order.length > 0 ? "aligned" : "inconclusive";
  const bestV = best ? byName.get(best) : undefined;
  const reason =
    `${decoupled.length} of ${order.length} variant${order.length === 1 ? "" : "s"} decouple${decoupled.length === 1 ? "s" : ""} from intent in most runs` +
    (decoupled.length ? ` (${decoupled.join(", ")})` : "") +
    `; ${aligned.length} stay${aligned.length === 1 ? "s" : ""} aligned` +
    (best ? `. Ranked first: ${best}, intent IQM ${ivText(bestV?.intent?.iqm, bestV?.intent?.ci)} (normalized).` : ".");

  let n = 0;
  const parts: string[] = [];
  const totalRuns = data.runs.length;
  parts.push(`<header><div class="brand">gapwatch · reward comparison</div><h1>${order.length} reward variant${order.length === 1 ? "" : "s"} <span style="font-weight:400;color:var(--muted)">on</span> ${esc(env)}</h1>
<p class="sub">${totalRuns} run${totalRuns === 1 ? "" : "s"} read${data.dir ? ` from <span class="mono">${esc(data.dir)}</span>` : ""}</p></header>`);
  parts.push(verdictBand(overall, reason));

  // Variant table.
  const rows = order
    .map((name, i) => {
      const v = byName.get(name)!;
      const c = counts.get(name)!;
      const runCount = Array.isArray(v.runs) ? v.runs.length : typeof v.runs === "number" ? v.runs : runsOf(name, data.runs).length;
      const [alo, ahi] = interval(v.alertRate?.ci);
      return `<tr data-variant="${esc(name)}"><td class="num">${i + 1}</td><td><b>${esc(name)}</b></td><td><span class="pill ${esc(token(maj.get(name)))}">${esc(maj.get(name))}</span> <span class="mono" style="color:var(--muted)">${esc(
        VERDICTS.filter((k) => c[k]).map((k) => `${c[k]} ${k}`).join(", "),
      )}</span></td><td class="num">${esc(runCount)}</td><td class="num">${esc(ivText(v.designer?.iqm, v.designer?.ci))}</td><td class="num">${esc(ivText(v.intent?.iqm, v.intent?.ci))}</td><td class="num">${esc(
        pct(v.alertRate?.p),
      )}${Number.isFinite(alo) ? ` <span style="color:var(--muted)">[${esc(pct(alo))}, ${esc(pct(ahi))}]</span>` : ""}</td></tr>`;
    })
    .join("");
  parts.push(
    `${sectionOpen(++n, "Variants, ranked", "variants")}<table class="data"><thead><tr><th class="num">#</th><th>variant</th><th>verdict (runs)</th><th class="num">runs</th><th class="num">designer IQM [interval]</th><th class="num">intent IQM [interval]</th><th class="num">alert rate [interval]</th></tr></thead><tbody>${rows}</tbody></table><p class="sub" style="margin-top:8px">IQM: interquartile mean of the final normalized scores over runs (the mean of the middle 50%), with its bootstrap interval, as written by gapwatch compare.</p></section>`,
  );

  // Intervals and alert rates.
  const iv: VariantInterval[] = [];
  for (const name of order) {
    const v = byName.get(name)!;
    for (const s of ["designer", "intent"] as const) {
      const st = v[s];
      if (!st) continue;
      const point = st.iqm ?? st.mean;
      const [lo, hi] = interval(st.ci);
      if (typeof point === "number") iv.push({ variant: name, score: s, point, lower: Number.isFinite(lo) ? lo : point, upper: Number.isFinite(hi) ? hi : point });
    }
  }
  let charts = "";
  if (iv.length) charts += await chartFigure("intervals", intervalsSpec(iv, order), "Interquartile mean of the final normalized scores per variant (dot) with its bootstrap interval (bar). A variant that games the specification shows a high designer score and a low intent score.");
  const rates = order
    .map((name) => {
      const v = byName.get(name)!;
      const [lo, hi] = interval(v.alertRate?.ci);
      return { variant: name, p: v.alertRate?.p ?? NaN, lower: Number.isFinite(lo) ? lo : (v.alertRate?.p ?? NaN), upper: Number.isFinite(hi) ? hi : (v.alertRate?.p ?? NaN) };
    })
    .filter((r) => Number.isFinite(r.p));
  if (rates.length) charts += await chartFigure("alert-rates", alertRateSpec(rates, order), "Share of each variant's runs in which the monitor raised at least one alert, with its interval.");
  if (charts) parts.push(`${sectionOpen(++n, "Scores and alert rates", "intervals")}${scoreKey(false)}${charts}</section>`);

  // Pairwise matrix.
  const cells = pairCells(doc);
  if (cells.length) {
    const fig = await chartFigure(
      "pairs",
      pairsSpec(cells, order),
      "Probability of improvement of the row variant over the column variant: the chance that a run of the row variant ends with a higher intent score than a run of the column variant (ties count half). 0.5 is no preference; cells filled in as 1 − P(column over row) where the file lists one direction only.",
    );
    parts.push(`${sectionOpen(++n, "Which variant beats which", "pairs")}${fig}</section>`);
  }

  // Small multiples.
  const multi: MultiRow[] = [];
  for (const r of data.runs) {
    for (const c of r.checkpoints) {
      multi.push({ variant: r.config.reward, run: r.runId, step: c.step, score: "designer", value: c.designerNorm });
      multi.push({ variant: r.config.reward, run: r.runId, step: c.step, score: "intent", value: c.intentNorm });
    }
  }
  const multiOrder = [...order, ...[...new Set(data.runs.map((r) => r.config.reward))].filter((x) => !order.includes(x))];
  if (multi.length) {
    const fig = await chartFigure("small-multiples", smallMultiplesSpec(multi, multiOrder), "Every run's normalized designer (solid) and intent (dashed) scores over training, one panel per variant, on one scale (0 = uniform random, 1 = optimal).");
    parts.push(`${sectionOpen(++n, "Each variant's curves", "curves")}${scoreKey(false)}${fig}</section>`);
  }

  // Runs and their alerts.
  if (data.runs.length) {
    const sorted = [...data.runs].sort((a, b) => multiOrder.indexOf(a.config.reward) - multiOrder.indexOf(b.config.reward) || a.config.seed - b.config.seed);
    const runRows = sorted
      .map(
        (r) =>
          `<tr><td class="mono">${esc(r.runId)}</td><td>${esc(r.config.reward)}</td><td class="num">${esc(r.config.seed)}</td><td><span class="pill ${esc(token(r.verdict))}">${esc(r.verdict)}</span></td><td class="num">${esc(pct(r.final?.designerNorm))}</td><td class="num">${esc(pct(r.final?.intentNorm))}</td><td class="num">${r.alerts.length}</td></tr>`,
      )
      .join("");
    const alertBlocks = sorted
      .filter((r) => r.alerts.length > 0)
      .map((r) => `<h3 class="mono" style="font-size:12.5px">${esc(r.runId)}</h3>${alertList(numberedAlerts(r).map((a) => ({ ...a, run: `seed ${r.config.seed}` })))}`)
      .join("");
    const total = sorted.reduce((s, r) => s + r.alerts.length, 0);
    parts.push(
      `${sectionOpen(++n, "Runs", "runs")}<table class="data"><thead><tr><th>run</th><th>variant</th><th class="num">seed</th><th>verdict</th><th class="num">designer</th><th class="num">intent</th><th class="num">alerts</th></tr></thead><tbody>${runRows}</tbody></table><details><summary>${total} alert${total === 1 ? "" : "s"} across the runs</summary>${alertBlocks || `<p class="none">No run raised an alert.</p>`}</details></section>`,
    );
  }

  if (data.audit) parts.push(`${sectionOpen(++n, "Audit findings", "audit")}${renderAuditSection(data.audit, data.model ?? null)}</section>`);
  if (data.pressure) parts.push(`${sectionOpen(++n, "Optimization pressure", "pressure")}${await renderPressureSection(data.pressure)}</section>`);

  // Reproduce.
  const m = data.manifests?.[0];
  const seeds = [...new Set(data.runs.map((r) => r.config.seed))].sort((a, b) => a - b);
  const learners = [...new Set(data.runs.map((r) => r.config.learner))];
  const repro = {
    environment: env,
    variants: order.join(", "),
    learners: learners.join(", ") || undefined,
    seeds: seeds.length ? seeds.join(", ") : undefined,
    "steps per run": [...new Set(data.runs.map((r) => r.config.steps))].join(", ") || undefined,
    "gapwatch version": m?.packageVersion,
    node: m?.nodeVersion,
  };
  const extra = Object.fromEntries(Object.entries(doc).filter(([k, v]) => !["variants", "pairs", "ranking", "env"].includes(k) && (typeof v !== "object" || v === null || JSON.stringify(v).length < 400)));
  parts.push(
    `${sectionOpen(++n, "Reproduce this comparison", "manifest")}${kvTable(repro)}${Object.keys(extra).length ? `<h3>Other settings in comparison.json</h3>${wordsTable(extra)}` : ""}${
      m ? `<h3>Resolved config of the first run</h3><pre>${esc(JSON.stringify(m.config, null, 2))}</pre>` : ""
    }<p>Each run directory holds its own manifest.json with its resolved config and seeds.</p></section>`,
  );
  parts.push(caution());
  parts.push(footer(m?.packageVersion, generatedAt));
  return page({
    title: `gapwatch · comparison on ${env}`,
    body: parts.join("\n"),
    data: { format: "gapwatch-report-data/1", kind: "comparison", env, verdict: overall, ranking: order, variants: doc.variants, pairs: doc.pairs ?? [] },
  });
}
