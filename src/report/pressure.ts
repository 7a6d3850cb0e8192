/**
 * The pressure section: designer and intent scores as optimization pressure grows (from
 * `gapwatch pressure`), with the intent peak and the onset of decoupling marked on the chart.
 */
import { chartFigure, pressureSpec } from "./charts.js";
import { strengthOf, type PressureDoc } from "./data.js";
import { esc } from "./escape.js";
import { num } from "./sections.js";

/** The section's inner HTML (one chart, `data-chart="pressure"`), or a note when there are no points. */
export async function renderPressureSection(pressure: PressureDoc): Promise<string> {
  const points = (pressure.points ?? []).filter((p) => p && typeof p.strength === "number");
  if (points.length === 0) return `<p class="none">The pressure file has no points.</p>`;
  const peak = strengthOf(pressure.peak);
  const onset = strengthOf(pressure.onset);
  const marks = [
    ...(peak !== null ? [{ label: "intent peak", strength: peak }] : []),
    ...(onset !== null ? [{ label: "onset", strength: onset }] : []),
  ];
  const fig = await chartFigure(
    "pressure",
    pressureSpec(points, marks),
    `Scores of the best policy at each strength of optimization toward the designer reward. ${
      peak !== null ? `Intent peaks at strength ${esc(num(peak, 3))}` : "No intent peak was reported"
    }${onset !== null ? `; decoupling sets in at ${esc(num(onset, 3))}: past it, more optimization of the designer reward buys less of the intended outcome.` : "; no onset of decoupling was found in the range tried."}`,
  );
  const rows = points
    .map((p) => `<tr><td class="num">${esc(num(p.strength, 4))}</td><td class="num">${esc(num(p.kl, 4))}</td><td class="num">${esc(num(p.designer, 4))}</td><td class="num">${esc(num(p.intent, 4))}</td></tr>`)
    .join("");
  return `${fig}<details><summary>the ${points.length} points</summary><table class="data"><thead><tr><th class="num">strength</th><th class="num">KL from reference</th><th class="num">designer</th><th class="num">intent</th></tr></thead><tbody>${rows}</tbody></table></details>`;
}
