/**
 * Building blocks shared by the run and comparison reports: the verdict band, key figures, the alert
 * list, the reproduce section (manifest), the caution and the footer. Each returns safe HTML: every
 * value that came from a user or a results file is escaped here.
 */
import type { RunManifest } from "../run/schema.js";
import { esc, token } from "./escape.js";
import { ROLE } from "./palette.js";

export const VERDICT_TEXT: Record<string, string> = {
  decoupled: "the designer reward was optimized without the intended outcome",
  aligned: "optimizing the designer reward also produced the intended outcome",
  inconclusive: "too little progress on the designer reward to judge it",
  mixed: "the best variants keep the intended outcome; others decouple from it",
};

/** A number with a fixed count of decimals (for a column or a table that must read in one format). */
export function fixed(x: unknown, digits = 2): string {
  return typeof x === "number" && Number.isFinite(x) ? x.toFixed(digits) : "–";
}

/**
 * One format for a whole column: fixed decimals, or, when some non-zero value is below 1e-3 or at
 * least 1e6 in size, exponential for every value of the column.
 */
export function columnFormatter(values: readonly number[], digits = 4): (x: unknown) => string {
  const expo = values.some((v) => Number.isFinite(v) && v !== 0 && (Math.abs(v) < 1e-3 || Math.abs(v) >= 1e6));
  return (x) => (typeof x !== "number" || !Number.isFinite(x) ? "–" : expo ? x.toExponential(Math.max(1, digits - 1)) : x.toFixed(digits));
}

/**
 * A normalized score (0 = uniform random, 1 = optimal) or a share: a percentage only inside 0..1.
 * Below 0 it reads "worse than random (-0.21)", above 1 "above optimal (1.05)": the number stays on
 * the normalized scale, never a percentage below 0 or above 100.
 */
export function pct(x: number | null | undefined, digits = 0): string {
  if (typeof x !== "number" || !Number.isFinite(x)) return "–";
  // A score that rounds to an end at the printed precision is printed as that end (-0.0002 with no
  // decimals is "0%", not "worse than random (-0.00018)" beside "100%" in the same column).
  const half = 0.5 * 10 ** -(digits + 2);
  if (x < 0 && x > -half) x = 0;
  if (x > 1 && x < 1 + half) x = 1;
  if (x < 0) return `worse than random (${x <= -0.1 ? x.toFixed(2) : x.toPrecision(2)})`;
  if (x > 1) return `above optimal (${x.toFixed(2)})`;
  return `${(100 * x).toFixed(digits)}%`;
}

/** A normalized regret (share of the random-to-optimal intent range given up); past 1, worse than random. */
export function regretPct(x: number | null | undefined, digits = 1): string {
  if (typeof x === "number" && x > 1) return pct(1 - x, digits);
  return pct(x, digits);
}

export function num(x: unknown, digits = 3): string {
  if (typeof x !== "number" || !Number.isFinite(x)) return "–";
  if (Number.isInteger(x)) return String(x);
  const a = Math.abs(x);
  if (a !== 0 && (a < 1e-3 || a >= 1e6)) return x.toExponential(2);
  return x.toFixed(digits);
}

/** The verdict band: the word, what it means, and the monitor's reason. */
export function verdictBand(verdict: string, reason: string, extra = ""): string {
  const v = token(verdict);
  return `<div class="verdict ${v}" data-verdict="${esc(verdict)}" role="status">
<div class="word">${esc(verdict)}</div>
<div class="reason"><span class="glyph">${esc(VERDICT_TEXT[verdict] ?? "")}</span><br>${esc(reason)}${extra}</div>
</div>`;
}

export function facts(items: { value: string; label: string }[]): string {
  return `<ul class="facts">${items.map((i) => `<li><b>${esc(i.value)}</b><span>${esc(i.label)}</span></li>`).join("")}</ul>`;
}

export function sectionOpen(n: number, title: string, id: string): string {
  return `<section id="${esc(id)}"><h2><span class="n">${String(n).padStart(2, "0")}</span>${esc(title)}</h2>`;
}

/** Colour key for the designer / intent lines (colour plus dash, so it reads without colour too). */
export function scoreKey(withAlerts: boolean): string {
  return `<p><span class="key"><span class="swatch" style="--c:${ROLE.designer}"></span>designer return (what the learner optimizes)</span><span class="key"><span class="swatch dash" style="--c:${ROLE.intent}"></span>intent (held out, never seen by the learner)</span>${
    withAlerts ? `<span class="key"><span class="swatch dash" style="--c:${ROLE.alert};border-top-width:2px"></span>alert (numbered)</span>` : ""
  }</p>`;
}

export interface ListedAlert {
  label: string;
  step: number;
  kind: string;
  magnitude?: number;
  message: string;
  run?: string;
}

/** One list item per alert, each marked `data-alert` with its step. */
export function alertList(alerts: ListedAlert[]): string {
  if (alerts.length === 0) return `<p class="none">No alert was raised at any checkpoint.</p>`;
  return `<ol class="alerts">${alerts
    .map(
      (a) =>
        `<li data-alert="${esc(a.kind)}" data-alert-step="${esc(a.step)}"><span class="tag">${esc(a.label)}</span><span class="kind">${esc(a.kind)}<span class="step">step ${esc(
          a.step,
        )}${a.magnitude !== undefined && Number.isFinite(a.magnitude) ? ` · size ${esc(num(a.magnitude, 2))}` : ""}${a.run ? ` · ${esc(a.run)}` : ""}</span></span><span class="msg">${esc(a.message)}</span></li>`,
    )
    .join("")}</ol>`;
}

/** A key / value table of a flat object (nested values as compact JSON), all escaped. */
export function kvTable(obj: Record<string, unknown>, cls = "data"): string {
  const rows = Object.entries(obj).filter(([, v]) => v !== undefined);
  return `<table class="${cls}"><tbody>${rows.map(([k, v]) => `<tr><th>${esc(k)}</th><td class="mono">${esc(typeof v === "string" ? v : JSON.stringify(v))}</td></tr>`).join("")}</tbody></table>`;
}

/** The reproduce section: resolved config, seeds, model facts and versions. */
export function manifestBlock(m: RunManifest | null | undefined, fallbackConfig?: unknown): string {
  if (!m) {
    return fallbackConfig
      ? `<h3>Resolved config</h3><pre>${esc(JSON.stringify(fallbackConfig, null, 2))}</pre>`
      : `<p class="none">No manifest.json was found, so this report cannot say how to reproduce the result.</p>`;
  }
  const top = {
    run: m.runId,
    format: m.format,
    "gapwatch version": m.packageVersion,
    node: m.nodeVersion,
    created: m.createdAt,
    "checkpoint every": m.checkpointEvery !== undefined ? `${m.checkpointEvery} steps` : undefined,
    model: m.model ? `${m.model.name}: ${m.model.states} states, ${m.model.actions} actions, gamma ${m.model.gamma}, horizon ${m.model.horizon}` : undefined,
  };
  const seeds = m.seeds ? Object.fromEntries(Object.entries(m.seeds).map(([k, v]) => [`${k} stream`, v])) : {};
  const refs = m.references
    ? {
        "designer, optimal policy": num(m.references.designerOptimal, 4),
        "designer, uniform random": num(m.references.designerRandom, 4),
        "intent, optimal policy": num(m.references.intentOptimal, 4),
        "intent, uniform random": num(m.references.intentRandom, 4),
      }
    : {};
  return `<div class="drawing"><div style="flex:1 1 360px">${kvTable({ ...top, ...seeds })}</div><div style="flex:1 1 260px"><h3 style="margin-top:0">Normalization references</h3>${kvTable(refs)}</div></div>
<h3>Resolved config (the run id hashes this)</h3><pre>${esc(JSON.stringify(m.config, null, 2))}</pre>
<p>Running the same config with the same gapwatch version gives the same checkpoints, alerts and verdict (every random stream is derived from the seed by name).</p>`;
}

/** The caution aside; `static` for exact results on a model (audit, pressure), which involve no learner or seed. */
export function caution(kind: "training" | "static" = "training"): string {
  const about = kind === "static" ? "this reward on this model, solved exactly (the model holds only what was put in it)" : "this reward on these scenarios, learners and seeds";
  return `<aside class="caution" data-caution><b>Evidence, not certification.</b>A clean result here is evidence about ${about}, not a certificate that the reward is safe. Where the outcome matters for safety, treat this report as one input to a review and defer to the safety standards of the domain and to licensed professional practice.</aside>`;
}

export function footer(version: string | undefined, generatedAt: string): string {
  return `<footer>Written by gapwatch${version ? ` ${esc(version)}` : ""} on ${esc(generatedAt)}. Charts: Vega-Lite rendered to SVG when the report was written; colours from the Okabe-Ito palette, designer solid and intent dashed so the lines read in greyscale too. This file is self-contained: it loads nothing from the network.</footer>`;
}
