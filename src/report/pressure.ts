/**
 * The pressure section: designer and intent scores as optimization pressure grows (from
 * `gapwatch pressure`), with the intent peak and the onset of decoupling marked on the chart.
 */
import { chartFigure, pressureSpec } from "./charts.js";
import { strengthOf, type PressureDoc } from "./data.js";
import { esc } from "./escape.js";
import { columnFormatter, num } from "./sections.js";

const isRange = (r: unknown): r is { random: number; optimum: number } =>
  !!r && typeof r === "object" && Number.isFinite((r as { random?: unknown }).random) && Number.isFinite((r as { optimum?: unknown }).optimum);

/** The pressure file's random/optimum levels of both scores, when it has them (older files do not). */
function scaleOf(x: unknown): { designer: { random: number; optimum: number }; intent: { random: number; optimum: number } } | null {
  if (!x || typeof x !== "object") return null;
  const { designer, intent } = x as { designer?: unknown; intent?: unknown };
  return isRange(designer) && isRange(intent) ? { designer, intent } : null;
}

/** Start, peak and end of the intent curve on its normalized scale (0 = uniform random, 1 = intent optimum), in words. */
function phasesText(points: { intent: number }[], range: { random: number; optimum: number }): string {
  const span = range.optimum - range.random;
  if (!(Math.abs(span) > 1e-12)) return "";
  const n = (v: number) => (v - range.random) / span;
  const xs = points.map((p) => n(p.intent));
  const peak = Math.max(...xs);
  const f = (x: number) => (x < 0 ? `${x.toFixed(2)} (worse than random)` : x.toFixed(2));
  return `On the intent scale (0 = uniform random, 1 = intent optimum) intent starts at ${f(xs[0])}, reaches ${f(peak)} at its peak and ends at ${f(xs[xs.length - 1])} under the strongest optimization.`;
}

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
  const scale = scaleOf(pressure.scale);
  const fig = await chartFigure(
    "pressure",
    pressureSpec(points, marks, scale),
    `Scores of the best policy at each strength of optimization toward the designer reward. ${
      peak !== null ? `Intent peaks at strength ${esc(num(peak, 3))}` : "No intent peak was reported"
    }${onset !== null ? `; decoupling sets in at ${esc(num(onset, 3))}: past it, more optimization of the designer reward buys less of the intended outcome.` : "; no onset of decoupling was found in the range tried."}${
      scale ? ` ${esc(phasesText(points, scale.intent))}` : ""
    }`,
  );
  // One format per column (fixed decimals, or exponential for the whole column when it needs it).
  const col = (k: "strength" | "kl" | "designer" | "intent") => columnFormatter(points.map((p) => (typeof p[k] === "number" ? (p[k] as number) : NaN)), 4);
  const [fs, fk, fd, fi] = [col("strength"), col("kl"), col("designer"), col("intent")];
  const rows = points
    .map((p) => `<tr><td class="num">${esc(fs(p.strength))}</td><td class="num">${esc(fk(p.kl))}</td><td class="num">${esc(fd(p.designer))}</td><td class="num">${esc(fi(p.intent))}</td></tr>`)
    .join("");
  return `${fig}<details><summary>the ${points.length} points</summary><table class="data"><thead><tr><th class="num">strength</th><th class="num">KL from reference</th><th class="num">designer</th><th class="num">intent</th></tr></thead><tbody>${rows}</tbody></table></details>`;
}
