/**
 * Charts of the HTML report: Vega-Lite specifications (pure functions of report data) and one
 * renderer that compiles a spec with vega-lite and renders it to an SVG string with vega's headless
 * view (`renderer: "none"`), at report time, in Node. The page then needs no script to show them.
 *
 * Vega escapes the text it writes into the SVG (axis labels, legends, titles, aria labels), so
 * user-provided names reach the page as text, never as markup; tests/report check this too.
 */
// vega and vega-lite are loaded on the first render only (quick start-up of commands that write no report).
import type { TopLevelSpec } from "vega-lite";
import { DIVERGING, ROLE } from "./palette.js";
import { esc, hideControls } from "./escape.js";

/** Shared look: our fonts, muted axes, no chart border. */
const CONFIG = {
  font: 'system-ui, -apple-system, "Segoe UI", Roboto, "DejaVu Sans", sans-serif',
  background: "#ffffff",
  view: { stroke: null },
  axis: { labelColor: ROLE.muted, titleColor: ROLE.ink, gridColor: ROLE.grid, domainColor: "#9aa3b2", tickColor: "#9aa3b2", labelFontSize: 11, titleFontSize: 12, titleFontWeight: 600 },
  legend: { labelColor: ROLE.ink, titleColor: ROLE.ink, labelFontSize: 11, titleFontSize: 11, orient: "top" },
  header: { labelColor: ROLE.ink, labelFontSize: 12, labelFontWeight: 600, titleFontSize: 0 },
  title: { color: ROLE.ink, fontSize: 13, fontWeight: 600, anchor: "start" },
} as const;

const SCORE_COLOR = { domain: ["designer", "intent"], range: [ROLE.designer, ROLE.intent] };
const SCORE_DASH = { domain: ["designer", "intent"], range: [[1, 0], [6, 3]] };

export interface CurvePoint {
  step: number;
  designer: number;
  intent: number;
  designerNorm: number;
  intentNorm: number;
}

export interface AlertMark {
  /** 1-based label shown on the chart and in the alert list. */
  label: string;
  step: number;
  kind: string;
}

const finite = (x: unknown): x is number => typeof x === "number" && Number.isFinite(x);

/** Long-form rows {step, score, value} for one pair of series. */
function longRows(points: CurvePoint[], raw: boolean) {
  const rows: { step: number; score: string; value: number }[] = [];
  for (const p of points) {
    const d = raw ? p.designer : p.designerNorm;
    const i = raw ? p.intent : p.intentNorm;
    if (finite(d)) rows.push({ step: p.step, score: "designer", value: d });
    if (finite(i)) rows.push({ step: p.step, score: "intent", value: i });
  }
  return rows;
}

/** Alert rules grouped by step, so two alerts at one checkpoint share a rule and a joint label. */
function alertRules(alerts: AlertMark[]) {
  const by = new Map<number, string[]>();
  for (const a of alerts) by.set(a.step, [...(by.get(a.step) ?? []), a.label]);
  return [...by.entries()].map(([step, labels]) => ({ step, label: labels.join(",") }));
}

function alertLayers(alerts: AlertMark[]) {
  if (alerts.length === 0) return [];
  const values = alertRules(alerts);
  return [
    { data: { values }, mark: { type: "rule", color: ROLE.alert, strokeWidth: 1.5, strokeDash: [2, 2] }, encoding: { x: { field: "step", type: "quantitative" } } },
    {
      data: { values },
      mark: { type: "text", color: ROLE.alert, dy: -4, fontWeight: 700, fontSize: 11, baseline: "bottom", align: "left", dx: 3, y: 0 },
      encoding: { x: { field: "step", type: "quantitative" }, text: { field: "label", type: "nominal" } },
    },
  ];
}

/** Designer vs intent over checkpoints, normalized (0 = uniform random, 1 = optimal), with alert rules. */
export function curvesSpec(points: CurvePoint[], alerts: AlertMark[], opts: { width?: number } = {}): TopLevelSpec {
  const rows = longRows(points, false);
  const lo = Math.min(0, ...rows.map((r) => r.value));
  const hi = Math.max(1, ...rows.map((r) => r.value));
  return {
    config: CONFIG,
    width: opts.width ?? 800,
    height: 260,
    layer: [
      { data: { values: [{ y: 0 }, { y: 1 }] }, mark: { type: "rule", color: "#c4cad4", strokeDash: [1, 3] }, encoding: { y: { field: "y", type: "quantitative" } } },
      {
        data: { values: rows },
        mark: { type: "line", point: { filled: true, size: 22 }, strokeWidth: 2.2, interpolate: "linear" },
        encoding: {
          x: { field: "step", type: "quantitative", title: "training step" },
          y: { field: "value", type: "quantitative", title: "normalized score", scale: { domain: [lo, hi], nice: false } },
          color: { field: "score", type: "nominal", scale: SCORE_COLOR, title: null },
          strokeDash: { field: "score", type: "nominal", scale: SCORE_DASH, legend: null },
        },
      },
      ...alertLayers(alerts),
    ],
  } as unknown as TopLevelSpec;
}

/** Raw scores, one panel per score (their units differ), with the optimal and random reference lines. */
export function rawCurvesSpec(points: CurvePoint[], refs: { designerOptimal: number; designerRandom: number; intentOptimal: number; intentRandom: number } | null, alerts: AlertMark[]): TopLevelSpec {
  const panel = (score: "designer" | "intent") => {
    const rows = longRows(points, true).filter((r) => r.score === score);
    const ref = refs
      ? [
          { value: score === "designer" ? refs.designerOptimal : refs.intentOptimal, what: "optimal" },
          { value: score === "designer" ? refs.designerRandom : refs.intentRandom, what: "uniform random" },
        ].filter((r) => finite(r.value))
      : [];
    return {
      width: 360,
      height: 190,
      title: score === "designer" ? "designer return (raw)" : "intent score (raw)",
      layer: [
        ...(ref.length
          ? [
              { data: { values: ref }, mark: { type: "rule", color: "#8c95a5", strokeDash: [1, 3] }, encoding: { y: { field: "value", type: "quantitative" } } },
              {
                data: { values: ref },
                // In the right margin, off the curves (a curve that reaches its optimum ends on that line).
                mark: { type: "text", color: ROLE.muted, align: "left", baseline: "middle", dx: 6, fontSize: 10, x: "width" },
                encoding: { y: { field: "value", type: "quantitative" }, text: { field: "what", type: "nominal" } },
              },
            ]
          : []),
        {
          data: { values: rows },
          mark: { type: "line", point: { filled: true, size: 18, color: score === "designer" ? ROLE.designer : ROLE.intent }, strokeWidth: 2, color: score === "designer" ? ROLE.designer : ROLE.intent, strokeDash: score === "designer" ? [1, 0] : [6, 3] },
          encoding: {
            x: { field: "step", type: "quantitative", title: "training step" },
            y: { field: "value", type: "quantitative", title: score === "designer" ? "discounted designer return" : "discounted intent", scale: { zero: false } },
          },
        },
        ...alertLayers(alerts),
      ],
    };
  };
  return { config: CONFIG, hconcat: [panel("designer"), panel("intent")], resolve: { scale: { y: "independent" } } } as unknown as TopLevelSpec;
}

export interface VariantInterval {
  variant: string;
  score: "designer" | "intent";
  point: number;
  lower: number;
  upper: number;
}

/** Interquartile mean per variant with bootstrap interval, designer and intent side by side. */
export function intervalsSpec(rows: VariantInterval[], order: string[]): TopLevelSpec {
  const values = rows.filter((r) => finite(r.point));
  const lo = Math.min(0, ...values.map((r) => (finite(r.lower) ? r.lower : r.point)));
  const hi = Math.max(1, ...values.map((r) => (finite(r.upper) ? r.upper : r.point)));
  return {
    config: CONFIG,
    width: 640,
    height: { step: 34 },
    data: { values },
    encoding: {
      y: { field: "variant", type: "nominal", sort: order, title: null, axis: { labelLimit: 220 } },
      yOffset: { field: "score", type: "nominal", scale: { domain: ["designer", "intent"], paddingInner: 0.2 } },
      color: { field: "score", type: "nominal", scale: SCORE_COLOR, title: null },
    },
    layer: [
      { mark: { type: "rule", strokeWidth: 4, strokeCap: "round", opacity: 0.55 }, encoding: { x: { field: "lower", type: "quantitative", title: "interquartile mean, normalized (bootstrap interval)", scale: { domain: [lo, hi], nice: false } }, x2: { field: "upper" } } },
      { mark: { type: "point", filled: true, size: 110, opacity: 1 }, encoding: { x: { field: "point", type: "quantitative" }, shape: { field: "score", type: "nominal", scale: { domain: ["designer", "intent"], range: ["circle", "diamond"] }, legend: null } } },
    ],
  } as unknown as TopLevelSpec;
}

export interface RateRow {
  variant: string;
  p: number;
  lower: number;
  upper: number;
}

/** Share of runs that raised an alert, per variant, with its interval. */
export function alertRateSpec(rows: RateRow[], order: string[]): TopLevelSpec {
  return {
    config: CONFIG,
    width: 640,
    height: { step: 28 },
    data: { values: rows.filter((r) => finite(r.p)) },
    encoding: { y: { field: "variant", type: "nominal", sort: order, title: null, axis: { labelLimit: 220 } } },
    layer: [
      { mark: { type: "bar", color: ROLE.alert, opacity: 0.3, height: { band: 0.6 } }, encoding: { x: { field: "p", type: "quantitative", title: "share of runs with an alert", scale: { domain: [0, 1] }, axis: { format: "%" } } } },
      { mark: { type: "rule", color: ROLE.alert, strokeWidth: 2 }, encoding: { x: { field: "lower", type: "quantitative" }, x2: { field: "upper" } } },
      { mark: { type: "tick", color: ROLE.alert, thickness: 2 }, encoding: { x: { field: "p", type: "quantitative" } } },
    ],
  } as unknown as TopLevelSpec;
}

export interface PairCell {
  a: string;
  b: string;
  p: number;
  derived: boolean;
}

/** Pairwise probability of improvement, row over column, on a diverging ramp centred at 0.5. */
export function pairsSpec(cells: PairCell[], order: string[]): TopLevelSpec {
  const n = order.length;
  const cell = Math.max(18, Math.min(48, Math.floor(520 / Math.max(1, n))));
  return {
    config: CONFIG,
    width: cell * n,
    height: cell * n,
    data: { values: cells.filter((c) => finite(c.p)).map((c) => ({ ...c, text: c.p.toFixed(2) })) },
    encoding: {
      x: { field: "b", type: "nominal", sort: order, title: "column variant", axis: { labelAngle: -40, labelLimit: 140, orient: "top" } },
      y: { field: "a", type: "nominal", sort: order, title: "row variant", axis: { labelLimit: 180 } },
    },
    layer: [
      { data: { values: order.map((v) => ({ a: v, b: v })) }, mark: { type: "rect", fill: "#eef0f4", stroke: ROLE.grid, strokeWidth: 1 } },
      {
        mark: { type: "rect", stroke: ROLE.grid, strokeWidth: 1 },
        encoding: { color: { field: "p", type: "quantitative", title: "P(row > column)", scale: { domain: [0, 0.5, 1], range: DIVERGING, interpolate: "rgb" }, legend: { orient: "right", gradientLength: 120 } } },
      },
      ...(n <= 12
        ? [
            {
              mark: { type: "text", fontSize: 10 },
              encoding: {
                text: { field: "text", type: "nominal" },
                // White on the saturated ends of the ramp, ink elsewhere, for contrast.
                color: { condition: { test: "datum.p > 0.8", value: "#ffffff" }, value: ROLE.ink },
              },
            },
          ]
        : []),
    ],
  } as unknown as TopLevelSpec;
}

export interface MultiRow {
  variant: string;
  run: string;
  step: number;
  score: "designer" | "intent";
  value: number;
}

/** Small multiples: every variant's runs (normalized designer and intent), one panel per variant. */
export function smallMultiplesSpec(rows: MultiRow[], order: string[]): TopLevelSpec {
  return {
    config: CONFIG,
    data: { values: rows.filter((r) => finite(r.value)) },
    facet: { field: "variant", type: "nominal", sort: order, title: null, header: { labelLimit: 160 } },
    columns: Math.min(4, Math.max(1, order.length)),
    spec: {
      width: 190,
      height: 110,
      mark: { type: "line", strokeWidth: 1.3, opacity: 0.8 },
      encoding: {
        x: { field: "step", type: "quantitative", title: null, axis: { tickCount: 3, labelFontSize: 9 } },
        y: { field: "value", type: "quantitative", title: null, scale: { domain: [0, 1], clamp: true }, axis: { tickCount: 3, labelFontSize: 9 } },
        color: { field: "score", type: "nominal", scale: SCORE_COLOR, title: null },
        strokeDash: { field: "score", type: "nominal", scale: SCORE_DASH, legend: null },
        detail: { field: "run", type: "nominal" },
      },
    },
  } as unknown as TopLevelSpec;
}

export interface PressurePoint {
  strength: number;
  kl?: number;
  designer: number;
  intent: number;
}

/**
 * Strengths to label on the pressure chart's axis: where the curve changes. The changing stretch runs
 * from the first to the last step between neighbouring points that moves designer or intent by more
 * than 2% of its range; its ends, the powers of ten inside it, 0, the largest strength and the marked
 * strengths are labelled, thinned so that labels on the log axis stay at least a quarter decade apart
 * (marks and ends win over decades). Pure.
 */
export function pressureTicks(points: PressurePoint[], marks: number[]): number[] {
  const pts = points.filter((p) => finite(p.strength) && finite(p.designer) && finite(p.intent)).sort((a, b) => a.strength - b.strength);
  if (pts.length === 0) return [];
  const span = (k: "designer" | "intent") => Math.max(1e-12, Math.max(...pts.map((p) => p[k])) - Math.min(...pts.map((p) => p[k])));
  const sd = span("designer");
  const si = span("intent");
  let a = -1;
  let b = -1;
  for (let i = 0; i + 1 < pts.length; i++) {
    const change = Math.max(Math.abs(pts[i + 1].designer - pts[i].designer) / sd, Math.abs(pts[i + 1].intent - pts[i].intent) / si);
    if (change > 0.02) {
      if (a < 0) a = i;
      b = i + 1;
    }
  }
  const top = pts[pts.length - 1].strength;
  const first: number[] = [...marks.filter(finite), ...(a >= 0 ? [pts[a].strength, pts[b].strength] : [])];
  const decades: number[] = [];
  const lo = a >= 0 ? pts[a].strength : pts.find((p) => p.strength > 0)?.strength ?? top;
  const hi = b >= 0 ? pts[b].strength : top;
  if (lo > 0) for (let k = Math.ceil(Math.log10(lo)); 10 ** k <= hi; k++) decades.push(10 ** k);
  const kept: number[] = [];
  const far = (x: number) => kept.every((y) => (x === 0 || y === 0 ? x !== y : Math.abs(Math.log10(x / y)) >= 0.25));
  for (const x of [0, top, ...first, ...decades]) if (x >= 0 && far(x)) kept.push(x);
  return kept.sort((x, y) => x - y);
}

/** Scores as optimization pressure grows, one panel per score (their units differ), peak and onset marked. */
export function pressureSpec(
  points: PressurePoint[],
  marks: { label: string; strength: number }[],
  scale?: { designer: { random: number; optimum: number }; intent: { random: number; optimum: number } } | null,
): TopLevelSpec {
  const pts = points.filter((p) => finite(p.strength));
  const ticks = pressureTicks(pts, marks.map((m) => m.strength));
  const positive = pts.filter((p) => p.strength > 0).map((p) => p.strength);
  const spread = positive.length > 1 ? Math.max(...positive) / Math.min(...positive) : 1;
  // Strengths usually grow geometrically from 0: a symmetric-log axis keeps the small ones apart.
  const xScale = spread > 50 ? { type: "symlog", constant: Math.min(...positive) } : {};
  const by = new Map<number, string[]>();
  for (const m of marks) if (finite(m.strength)) by.set(m.strength, [...(by.get(m.strength) ?? []), m.label]);
  const m = [...by.entries()].map(([strength, labels]) => ({ strength, label: labels.join(" = ") }));
  // Random and optimal levels of each score as dotted rules, labelled in the right margin (off the curves).
  const refs = (score: "designer" | "intent") => {
    const r = scale?.[score];
    if (!r || !finite(r.random) || !finite(r.optimum)) return [];
    const values = [
      { value: r.optimum, what: score === "intent" ? "intent optimum" : "optimum" },
      { value: r.random, what: "uniform random" },
    ];
    return [
      { data: { values }, mark: { type: "rule", color: "#8c95a5", strokeDash: [1, 3] }, encoding: { y: { field: "value", type: "quantitative" } } },
      { data: { values }, mark: { type: "text", color: ROLE.muted, align: "left", baseline: "middle", dx: 6, fontSize: 10, x: "width" }, encoding: { y: { field: "value", type: "quantitative" }, text: { field: "what", type: "nominal" } } },
    ];
  };
  const panel = (score: "designer" | "intent", last: boolean) => ({
    width: 720,
    height: 130,
    layer: [
      ...refs(score),
      {
        data: { values: pts.filter((p) => finite(p[score])).map((p) => ({ strength: p.strength, value: p[score] })) },
        mark: { type: "line", point: { filled: true, size: 20, color: score === "designer" ? ROLE.designer : ROLE.intent }, strokeWidth: 2.2, color: score === "designer" ? ROLE.designer : ROLE.intent, strokeDash: score === "designer" ? [1, 0] : [6, 3] },
        encoding: {
          x: {
            field: "strength",
            type: "quantitative",
            title: last ? `optimization pressure toward the designer reward (strength${spread > 50 ? ", log scale" : ""})` : null,
            scale: xScale,
            axis: last ? { grid: false, values: ticks, format: ".3~r", labelOverlap: true } : { labels: false, grid: false, values: ticks },
          },
          y: { field: "value", type: "quantitative", title: score === "designer" ? "designer return" : "intent", scale: { zero: false } },
        },
      },
      ...(m.length
        ? [
            { data: { values: m }, mark: { type: "rule", color: ROLE.alert, strokeDash: [3, 3], strokeWidth: 1.5 }, encoding: { x: { field: "strength", type: "quantitative", scale: xScale } } },
            ...(score === "designer"
              ? [{ data: { values: m }, mark: { type: "text", color: ROLE.alert, fontWeight: 700, align: "left", dx: 4, baseline: "bottom", y: -3, fontSize: 11 }, encoding: { x: { field: "strength", type: "quantitative", scale: xScale }, text: { field: "label", type: "nominal" } } }]
              : []),
          ]
        : []),
    ],
  });
  return { config: CONFIG, vconcat: [panel("designer", false), panel("intent", true)], spacing: 8, resolve: { scale: { y: "independent" } } } as unknown as TopLevelSpec;
}

/** Compile a Vega-Lite spec and render it to an SVG string headlessly (names from users' files: control and direction characters shown as U+FFFD). */
export async function renderSvg(spec: TopLevelSpec): Promise<string> {
  const [vega, { compile }] = await Promise.all([import("vega"), import("vega-lite")]);
  const compiled = compile(spec).spec;
  const view = new vega.View(vega.parse(compiled), { renderer: "none" });
  try {
    return hideControls(await view.toSVG());
  } finally {
    view.finalize();
  }
}

/** A rendered chart in its figure, marked `data-chart` so tests and readers can find it. */
export async function chartFigure(name: string, spec: TopLevelSpec, caption: string): Promise<string> {
  const svg = await renderSvg(spec);
  return `<figure class="chart" data-chart="${esc(name)}">${svg}<figcaption>${caption}</figcaption></figure>`;
}
