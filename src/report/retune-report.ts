/**
 * The `gapwatch retune --report` page: the tuned weights, per-feature diagnosis, a chart of regretNorm
 * per held-out layout (gaming threshold marked), and the worst held-out layout's map with the
 * designer-optimal route. Same page shell, sections and caution as the other reports; every
 * user-supplied name (features, env, reward) is escaped. Pure: document in, HTML out.
 */
import type { TopLevelSpec } from "vega-lite";
import type { FiniteModel } from "../model/types.js";
import type { RetuneDoc } from "../tune/run.js";
import { drawingBlock } from "./audit.js";
import { chartFigure } from "./charts.js";
import { esc } from "./escape.js";
import { page } from "./page.js";
import { OKABE_ITO, ROLE } from "./palette.js";
import { caution, facts, footer, kvTable, num, pct, sectionOpen } from "./sections.js";

export interface RetuneReportInput {
  doc: RetuneDoc;
  worstModel: FiniteModel | null;
  worstRoute: number[];
  version?: string;
  generatedAt?: string;
}

function holdoutSpec(doc: RetuneDoc): TopLevelSpec {
  const values = doc.holdout.layouts.map((layout, i) => ({ layout: String(layout), regretNorm: doc.holdout.regretNorm[i], gaming: doc.holdout.regretNorm[i] >= doc.holdout.gamingAt ? "games" : "keeps intent" }));
  return {
    width: Math.max(240, Math.min(900, values.length * 10)),
    height: 180,
    layer: [
      {
        data: { values },
        mark: { type: "bar" },
        encoding: {
          x: { field: "layout", type: "ordinal", sort: null, title: "held-out layout", axis: values.length > 40 ? { labels: false, ticks: false } : {} },
          y: { field: "regretNorm", type: "quantitative", title: "regretNorm" },
          color: { field: "gaming", type: "nominal", scale: { domain: ["games", "keeps intent"], range: [ROLE.alert, OKABE_ITO.bluishGreen] }, title: null },
        },
      },
      { data: { values: [{ y: doc.holdout.gamingAt }] }, mark: { type: "rule", strokeDash: [4, 3], color: "#555" }, encoding: { y: { field: "y", type: "quantitative" } } },
    ],
  } as unknown as TopLevelSpec;
}

export async function renderRetuneReport(input: RetuneReportInput): Promise<string> {
  const { doc } = input;
  const h = doc.holdout;
  const head = `<header><h1>Retune: ${esc(doc.env)} from ${esc(doc.reward)}</h1></header>`;
  const summary = facts([
    { value: String(doc.tuning.layouts.length), label: "tuning layouts" },
    { value: num(doc.tuning.maxRegretNorm, 3), label: "largest tuning regretNorm" },
    { value: String(h.layouts.length), label: "held-out layouts" },
    { value: `${pct(h.gamingRate, 0)} (${pct(h.ci.lower, 0)}–${pct(h.ci.upper, 0)})`, label: "held-out layouts gamed (95% Wilson)" },
  ]);
  const weights = kvTable(Object.fromEntries(Object.entries(doc.tuned.weights).map(([k, v]) => [k, num(v, 4)])));
  const feat = `<table class="data"><thead><tr><th>feature</th><th>tuned weight</th><th>interval over tuning layouts</th><th>constrained</th><th>likely cause</th><th>layouts to add</th></tr></thead><tbody>${doc.features
    .map(
      (f) =>
        `<tr data-feature="${esc(f.name)}"><td>${esc(f.name)}</td><td class="mono">${esc(num(f.weight, 4))}</td><td class="mono">${esc(f.interval ? `[${f.interval[0] === null ? "-∞" : num(f.interval[0], 4)}, ${f.interval[1] === null ? "+∞" : num(f.interval[1], 4)}]` : "none")}</td><td>${f.constrained ? "yes" : "no"}</td><td>${f.likelyCause ? "yes" : ""}</td><td>${esc(f.suggest.join(", "))}</td></tr>`,
    )
    .join("")}</tbody></table>`;
  const diag = doc.diagnosis.length ? `<ul>${doc.diagnosis.map((d) => `<li>${esc(d)}</li>`).join("")}</ul>` : `<p class="none">Nothing to diagnose: no held-out layout games.</p>`;
  const chart = h.layouts.length ? await chartFigure("holdout-regret", holdoutSpec(doc), `regretNorm of the tuned reward on each held-out layout; dashed: the gaming threshold ${esc(h.gamingAt)}`) : "";
  const w = h.worst;
  const worst = w
    ? `<p>Layout ${esc(w.layout)}: regretNorm ${esc(num(w.regretNorm, 3))}, intent given up ${esc(num(w.regret, 4))}${
        w.divergence ? `; the route first leaves the intended behaviour at ${esc(w.divergence.state)} (step ${esc(w.divergence.step)}): it goes ${esc(w.divergence.designerAction)} where ${esc(w.divergence.intentAction)} is intended` : ""
      }.</p>${drawingBlock(input.worstModel, [{ kind: "route", label: "designer-optimal route (tuned weights)", states: input.worstRoute }], "worst-layout")}`
    : `<p class="none">No held-out layouts.</p>`;
  const body = [
    head,
    summary,
    sectionOpen(1, "Tuned weights", "tuned") + weights + "</section>",
    sectionOpen(2, "What the tuning layouts constrained", "features") + feat + diag + "</section>",
    sectionOpen(3, "Held-out layouts", "holdout") + chart + "</section>",
    sectionOpen(4, "Worst held-out layout", "worst") + worst + "</section>",
    caution(),
    footer(input.version, input.generatedAt ?? new Date().toISOString()),
  ].join("\n");
  return page({ title: `gapwatch retune ${doc.env}`, body, data: doc });
}
