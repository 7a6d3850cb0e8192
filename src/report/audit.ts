/**
 * The audit section of a report: every finding with its evidence, and the evidence drawn where the
 * model has a layout — the grid map with the reward loop or the risky route, the ring track with the
 * gate exploit. Drawings are small inline SVGs of our own (cells and a path), not charts. Pure.
 */
import type { FiniteModel } from "../model/types.js";
import type { AuditDoc } from "./data.js";
import { esc, token } from "./escape.js";
import { ROLE } from "./palette.js";
import { evidenceList, keyWords } from "./evidence.js";
import { fixed, num } from "./sections.js";
import { worseThanRandom } from "../util/share.js";

/** A path of states to draw, with what it is. */
export interface DrawnPath {
  /**
   * loop: a repeatable loop; route: a designer-optimal (risky) route; safe: the intended, safe route;
   * given: cells (not a path) where the designer-optimal route gives up intent the intended one keeps.
   */
  kind: "loop" | "route" | "safe" | "given";
  label: string;
  states: number[];
}

const SEVERITY_ORDER: Record<string, number> = { critical: 0, warning: 1, info: 2 };

let drawingCounter = 0;

function stateIdsOf(model: FiniteModel | null | undefined, v: { stateIds?: unknown; states?: unknown }): number[] {
  if (Array.isArray(v.stateIds) && v.stateIds.every((x) => Number.isInteger(x))) return v.stateIds as number[];
  if (model && Array.isArray(v.states)) {
    const index = new Map(model.stateLabels.map((l, i) => [l, i]));
    const ids = (v.states as unknown[]).map((s) => (typeof s === "number" ? s : index.get(String(s)) ?? -1));
    if (ids.length > 0 && ids.every((i) => i >= 0 && i < model.nStates)) return ids;
  }
  return [];
}

/** Paths found in an audit document: its loops, and any state sequence in a finding's evidence. */
export function auditPaths(audit: AuditDoc, model?: FiniteModel | null): DrawnPath[] {
  const out: DrawnPath[] = [];
  const seen = new Set<string>();
  const add = (p: DrawnPath) => {
    const key = `${p.kind}:${p.states.join(",")}`;
    if (p.states.length === 0 || seen.has(key)) return;
    seen.add(key);
    out.push(p);
  };
  (audit.loops ?? []).forEach((l, i) => add({ kind: "loop", label: `loop ${i + 1}`, states: stateIdsOf(model, l) }));
  const walk = (v: unknown, path: string, check: string, depth: number) => {
    if (!v || typeof v !== "object" || depth > 4) return;
    if (Array.isArray(v)) return;
    const o = v as Record<string, unknown>;
    const ids = stateIdsOf(model, o);
    if (ids.length > 0 && (Array.isArray(o.stateIds) || Array.isArray(o.states))) {
      const last = path.split(".").pop() ?? "";
      const kind = /givenUp$/.test(path) ? "given" : /loop|cycle/i.test(path) ? "loop" : /safe/i.test(path) ? "safe" : "route";
      add({ kind, label: `${check}: ${last ? keyWords(last) : "route"}`, states: ids });
    }
    for (const [k, x] of Object.entries(o)) {
      if (Array.isArray(x) && /route|path|trajectory/i.test(k) && x.every((n) => Number.isInteger(n))) {
        add({ kind: /safe/i.test(k) ? "safe" : "route", label: `${check}: ${keyWords(k)}`, states: x as number[] });
      } else walk(x, path ? `${path}.${k}` : k, check, depth + 1);
    }
  };
  for (const f of audit.findings ?? []) walk(f.evidence, "", f.check, 0);
  return out;
}

const CELL = 26;

const CELL_STYLE: Record<string, { fill: string; name: string }> = {
  "#": { fill: "#3d4452", name: "wall" },
  ".": { fill: "#f4f2ec", name: "floor" },
  "*": { fill: "#bfe6d8", name: "goal" },
  "!": { fill: "#f5c9ad", name: "hazard (ends the episode)" },
  "%": { fill: "#f6eeb4", name: "fragile cell" },
  "=": { fill: "#d9dde8", name: "slick plate (a move may overshoot one cell)" },
  "?": { fill: "#efd3e3", name: "tag / scan cell" },
  "+": { fill: "#f7dfa8", name: "item" },
  "@": { fill: "#ffffff", name: "start" },
};

function styleOf(ch: string) {
  if (/[1-9]/.test(ch)) return { fill: "#ffffff", name: "start (group)" };
  if ("^>v<".includes(ch)) return { fill: "#e4e7ee", name: "one-way cell" };
  return CELL_STYLE[ch] ?? { fill: "#f4f2ec", name: "floor" };
}

/** How each kind of path is drawn: the risky route solid in the designer colour, the safe route dashed in the intent colour (as in the charts), loops in the alert colour. */
const PATH_STYLE: Record<DrawnPath["kind"], { colour: string; dash: string }> = {
  loop: { colour: ROLE.alert, dash: "" },
  route: { colour: ROLE.designer, dash: "" },
  safe: { colour: ROLE.intent, dash: "7 4" },
  given: { colour: ROLE.alert, dash: "" },
};

/** A cross over a cell or position (the "given" marks): two strokes, half-width `r`. */
function cross(x: number, y: number, r: number, colour: string): string {
  return `<path d="M${(x - r).toFixed(1)},${(y - r).toFixed(1)}L${(x + r).toFixed(1)},${(y + r).toFixed(1)}M${(x - r).toFixed(1)},${(y + r).toFixed(1)}L${(x + r).toFixed(1)},${(y - r).toFixed(1)}" stroke="${colour}" stroke-width="3" stroke-linecap="round"/>`;
}

function markers(id: string): string {
  return `<defs>${(Object.keys(PATH_STYLE) as DrawnPath["kind"][])
    .map((k) => [k, PATH_STYLE[k].colour])
    .map(
      ([k, c]) =>
        `<marker id="${id}-${k}" viewBox="0 0 10 10" refX="7" refY="5" markerWidth="5" markerHeight="5" orient="auto-start-reverse"><path d="M0,0L10,5L0,10z" fill="${c}"/></marker>`,
    )
    .join("")}</defs>`;
}

/** The grid map as SVG with each path drawn through its cells' centres (loops closed). */
export function gridSvg(model: FiniteModel, paths: DrawnPath[]): string | null {
  const lay = model.layout;
  if (!lay || lay.kind !== "grid") return null;
  const id = `gw-d${++drawingCounter}`;
  const w = lay.cols * CELL;
  const h = lay.rows * CELL;
  let cells = "";
  for (let r = 0; r < lay.rows; r++) {
    const line = lay.map[r] ?? "";
    for (let c = 0; c < lay.cols; c++) {
      const ch = line[c] ?? "#";
      const st = styleOf(ch);
      cells += `<rect x="${c * CELL}" y="${r * CELL}" width="${CELL}" height="${CELL}" fill="${st.fill}" stroke="#d3d6dd" stroke-width="0.5"><title>${esc(st.name)}</title></rect>`;
      if (ch !== "." && ch !== "#") cells += `<text x="${c * CELL + CELL / 2}" y="${r * CELL + CELL / 2 + 4}" text-anchor="middle" font-size="12" font-family="ui-monospace,monospace" fill="#5b6475">${esc(ch)}</text>`;
    }
  }
  const centre = (s: number): [number, number] | null => {
    const cell = lay.cellOf[s];
    if (cell === undefined || cell < 0) return null;
    return [(cell % lay.cols) * CELL + CELL / 2, Math.floor(cell / lay.cols) * CELL + CELL / 2];
  };
  let drawn = "";
  paths.forEach((p, i) => {
    const pts = p.states.map(centre).filter((x): x is [number, number] => x !== null);
    if (pts.length === 0) return;
    if (p.kind === "given") {
      for (const [x, y] of pts) drawn += cross(x, y, 7, PATH_STYLE.given.colour);
      return;
    }
    const off = (i % 3) * 3 - 3;
    const seq = pts.map(([x, y]) => `${x + off},${y + off}`);
    const colour = PATH_STYLE[p.kind].colour;
    const dash = PATH_STYLE[p.kind].dash ? ` stroke-dasharray="${PATH_STYLE[p.kind].dash}"` : "";
    if (pts.length === 1 || (p.kind === "loop" && new Set(seq).size === 1)) {
      drawn += `<circle cx="${pts[0][0] + off}" cy="${pts[0][1] + off}" r="8" fill="none" stroke="${colour}" stroke-width="3"/>`;
    } else {
      const all = p.kind === "loop" ? [...seq, seq[0]] : seq;
      drawn += `<polyline points="${all.join(" ")}" fill="none" stroke="${colour}" stroke-width="3" stroke-linejoin="round" stroke-linecap="round" opacity="0.9"${dash} marker-mid="url(#${id}-${p.kind})" marker-end="url(#${id}-${p.kind})"/>`;
    }
    drawn += `<circle cx="${pts[0][0] + off}" cy="${pts[0][1] + off}" r="3.5" fill="${colour}"/>`;
  });
  return `<svg xmlns="http://www.w3.org/2000/svg" width="${w}" height="${h}" viewBox="0 0 ${w} ${h}" role="img" aria-label="map of ${esc(model.name)}">${markers(id)}${cells}${drawn}</svg>`;
}

/** The ring track as SVG: positions on a circle, gates as bars, each path's positions highlighted. */
export function trackSvg(model: FiniteModel, paths: DrawnPath[]): string | null {
  const lay = model.layout;
  if (!lay || lay.kind !== "track") return null;
  const id = `gw-d${++drawingCounter}`;
  const size = 360;
  const cx = size / 2;
  const cy = size / 2;
  const R = 112;
  const n = lay.length;
  const at = (p: number, r = R): [number, number] => {
    const a = (2 * Math.PI * p) / n - Math.PI / 2;
    return [cx + r * Math.cos(a), cy + r * Math.sin(a)];
  };
  let out = `<circle cx="${cx}" cy="${cy}" r="${R}" fill="none" stroke="#c9ced8" stroke-width="10"/>`;
  for (let p = 0; p < n; p++) {
    const [x, y] = at(p);
    out += `<circle cx="${x.toFixed(1)}" cy="${y.toFixed(1)}" r="2" fill="#8c95a5"/>`;
  }
  for (const g of lay.gates) {
    const [x1, y1] = at(g - 0.5, R - 16);
    const [x2, y2] = at(g - 0.5, R + 16);
    const [tx, ty] = at(g - 0.5, R + 28);
    out += `<line x1="${x1.toFixed(1)}" y1="${y1.toFixed(1)}" x2="${x2.toFixed(1)}" y2="${y2.toFixed(1)}" stroke="${ROLE.ink}" stroke-width="3"/><text x="${tx.toFixed(1)}" y="${(ty + 4).toFixed(1)}" text-anchor="middle" font-size="11" fill="${ROLE.ink}">gate ${esc(g)}</text>`;
  }
  paths.forEach((p, i) => {
    const colour = PATH_STYLE[p.kind].colour;
    const dash = PATH_STYLE[p.kind].dash ? ` stroke-dasharray="${PATH_STYLE[p.kind].dash}"` : "";
    const r = R - 22 - i * 8;
    const pos = p.states.map((s) => lay.posOf[s]).filter((x) => x !== undefined && x >= 0);
    if (pos.length === 0) return;
    if (p.kind === "given") {
      for (const q of new Set(pos)) out += cross(...at(q), 7, colour);
      return;
    }
    const seq = p.kind === "loop" ? [...pos, pos[0]] : pos;
    let d = "";
    for (let k = 0; k < seq.length; k++) {
      const [x, y] = at(seq[k], r);
      d += `${k === 0 ? "M" : "L"}${x.toFixed(1)},${y.toFixed(1)}`;
    }
    out += `<path d="${d}" fill="none" stroke="${colour}" stroke-width="3" stroke-linejoin="round"${dash} marker-end="url(#${id}-${p.kind})"/>`;
    for (const q of new Set(pos)) {
      const [x, y] = at(q);
      out += `<circle cx="${x.toFixed(1)}" cy="${y.toFixed(1)}" r="6" fill="${colour}" opacity="0.85"/>`;
    }
  });
  out += `<text x="${cx}" y="${cy - 4}" text-anchor="middle" font-size="12" fill="${ROLE.muted}">${esc(n)} positions</text><text x="${cx}" y="${cy + 12}" text-anchor="middle" font-size="11" fill="${ROLE.muted}">clockwise from the top</text>`;
  return `<svg xmlns="http://www.w3.org/2000/svg" width="${size}" height="${size}" viewBox="0 0 ${size} ${size}" role="img" aria-label="track of ${esc(model.name)}">${markers(id)}${out}</svg>`;
}

/** A drawing of the paths on the model's layout with a legend, or "" when the model has none. */
export function drawingBlock(model: FiniteModel | null | undefined, paths: DrawnPath[], name: string): string {
  if (!model) return "";
  const svg = gridSvg(model, paths) ?? trackSvg(model, paths);
  if (!svg) return "";
  const lay = model.layout!;
  const legendCells =
    lay.kind === "grid"
      ? [...new Set(lay.map.join(""))]
          .filter((ch) => ch !== ".")
          .map((ch) => `<div><span class="mono">${esc(ch)}</span> ${esc(styleOf(ch).name)}</div>`)
          .join("")
      : `<div>bars: gates (a gate at g sits between positions g-1 and g)</div>`;
  const legendPaths = paths
    .map((p) => {
      const c = PATH_STYLE[p.kind].colour;
      const labels = p.states.slice(0, 8).map((s) => model.stateLabels[s] ?? String(s));
      const key = p.kind === "given" ? `<span class="cross" style="color:${c}">×</span>` : `<span class="swatch${PATH_STYLE[p.kind].dash ? " dash" : ""}" style="--c:${c}"></span>`;
      return `<div data-path-kind="${p.kind}">${key} <b>${esc(p.label)}</b>: ${esc(labels.join(p.kind === "given" ? ", " : " → "))}${p.states.length > 8 ? " …" : ""}</div>`;
    })
    .join("");
  return `<div class="drawing" data-drawing="${esc(token(name))}">${svg}<div class="legend">${legendPaths || `<div class="none">nothing to draw</div>`}${legendCells}</div></div>`;
}

/** The audit section's inner HTML: summary numbers, the drawing, and every finding with its evidence. */
export function renderAuditSection(audit: AuditDoc, model?: FiniteModel | null): string {
  const findings = [...(audit.findings ?? [])].sort((a, b) => (SEVERITY_ORDER[a.severity] ?? 3) - (SEVERITY_ORDER[b.severity] ?? 3));
  const counts = findings.reduce<Record<string, number>>((m, f) => ((m[f.severity] = (m[f.severity] ?? 0) + 1), m), {});
  const head = `<p>Static checks of <b>${esc(audit.reward ?? "the reward")}</b> on <b>${esc(audit.env ?? "the environment")}</b>, solved exactly (no training): ${
    findings.length
  } finding${findings.length === 1 ? "" : "s"} (${["critical", "warning", "info"].map((s) => `${counts[s] ?? 0} ${s}`).join(", ")}).${
    typeof audit.regretNorm === "number" ? ` The designer-optimal policy ${audit.regretNorm > 1 ? `does <b>${esc(worseThanRandom(1 - audit.regretNorm))}</b>` : `gives up <b>${esc(num(100 * audit.regretNorm, 1))}%</b> of the achievable intent`} (regret ${esc(num(audit.regret, 4))}).` : ""
  }</p>`;
  const paths = auditPaths(audit, model);
  const drawing = drawingBlock(model, paths, "audit-evidence");
  const item = (f: (typeof findings)[number]) => {
    return `<div class="finding" data-finding="${esc(f.check)}" data-severity="${esc(f.severity)}"><span class="pill ${esc(token(f.severity))}">${esc(f.severity)}</span> <b>${esc(f.check)}</b><p class="msg">${esc(
        f.message,
      )}</p>${evidenceList(f.evidence)}</div>`;
  };
  const major = findings.filter((f) => f.severity !== "info");
  const minor = findings.filter((f) => f.severity === "info");
  const list =
    major.map(item).join("") +
    (minor.length ? `<details${major.length ? "" : " open"}><summary>${minor.length} informational finding${minor.length === 1 ? "" : "s"}</summary>${minor.map(item).join("")}</details>` : "");
  const loops = (audit.loops ?? []).length
    ? `<h3>Loops the reward pays for</h3><table class="data"><thead><tr><th>loop</th><th class="num">designer / step</th><th class="num">intent / step</th><th>states (actions)</th></tr></thead><tbody>${(audit.loops ?? [])
        .map(
          (l, i) =>
            `<tr><td>${i + 1}</td><td class="num">${esc(fixed(l.meanDesignerPerStep, 4))}</td><td class="num">${esc(fixed(l.meanIntentPerStep, 4))}</td><td class="mono">${esc(
              (l.states ?? []).map((s, k) => `${s}${l.actions?.[k] ? ` (${l.actions[k]})` : ""}`).join(" → "),
            )}</td></tr>`,
        )
        .join("")}</tbody></table>`
    : "";
  const noDrawing = !drawing && paths.length > 0 ? `<p class="none">The evidence names states, but the environment could not be loaded to draw them.</p>` : "";
  return `${head}${drawing}${noDrawing}${list || `<p class="none">The audit reported no findings.</p>`}${loops}`;
}

