/**
 * Pictures for the terminal: a policy's route drawn on a grid map, a track strip, and sparklines of a
 * run's score series. Pure functions; no I/O.
 */
import { startStates } from "../audit/given-up.js";
import { GRID_LEGEND } from "../model/grid-map.js";
import { likelyPath, tracePolicy } from "../model/likely-path.js";
import type { FiniteModel } from "../model/types.js";
import type { RunResult } from "../run/schema.js";

const BARS = "▁▂▃▄▅▆▇█";

/** A sparkline of a series scaled to its own min..max (or a given range). Pure. */
export function sparkline(values: number[], range?: [number, number]): string {
  if (values.length === 0) return "";
  const lo = range ? range[0] : Math.min(...values);
  const hi = range ? range[1] : Math.max(...values);
  return values
    .map((v) => {
      if (!Number.isFinite(v)) return " ";
      const t = hi - lo < 1e-12 ? 0.5 : (v - lo) / (hi - lo);
      return BARS[Math.max(0, Math.min(BARS.length - 1, Math.round(t * (BARS.length - 1))))];
    })
    .join("");
}

/** Both normalized series of a run on one shared scale (so their levels compare). */
export function sparklines(r: RunResult): { designer: string; intent: string } {
  const d = r.checkpoints.map((c) => c.designerNorm);
  const i = r.checkpoints.map((c) => c.intentNorm);
  const lo = Math.min(0, ...d, ...i);
  const hi = Math.max(1, ...d, ...i);
  return { designer: sparkline(d, [lo, hi]), intent: sparkline(i, [lo, hi]) };
}

/** A score on its normalized scale: 0 = uniform random, 1 = optimal (the raw value when the two coincide). */
export function normalizeScore(v: number, range: { random: number; optimum: number }): number {
  const span = range.optimum - range.random;
  return Math.abs(span) < 1e-12 ? 0 : (v - range.random) / span;
}

export interface PressureLike {
  points: { strength: number; kl: number; designer: number; intent: number }[];
  scale: { designer: { random: number; optimum: number }; intent: { random: number; optimum: number } };
}

/**
 * Sparklines of a pressure curve: designer return and intent normalized (0 = uniform random, 1 =
 * optimal) on one shared scale that always spans 0..1, so a wobble of 0.005 stays a flat line and the
 * two rows compare; the KL row on its own scale from 0.
 */
export function pressureSparklines(c: PressureLike): { designer: string; intent: string; kl: string; designerNorm: number[]; intentNorm: number[] } {
  const d = c.points.map((p) => normalizeScore(p.designer, c.scale.designer));
  const i = c.points.map((p) => normalizeScore(p.intent, c.scale.intent));
  const lo = Math.min(0, ...d, ...i);
  const hi = Math.max(1, ...d, ...i);
  const kl = c.points.map((p) => p.kl);
  return { designer: sparkline(d, [lo, hi]), intent: sparkline(i, [lo, hi]), kl: sparkline(kl, [0, Math.max(1e-9, ...kl)]), designerNorm: d, intentNorm: i };
}

const ARROWS: Record<string, string> = { up: "↑", right: "→", down: "↓", left: "←", wait: "•", north: "↑", east: "→", south: "↓", west: "←" };

/** Map characters a route arrow may cover (floor and terrain); starts, goals, items, tags and hazards stay visible. */
const COVERABLE = new Set([".", "%", "=", "^", ">", "v", "<", " "]);

/**
 * The grid map with the route of `policy` from every start state drawn as arrows (first action taken
 * in each cell, most likely outcome of each move), and a legend line under it naming the map
 * characters present and the arrows. Arrows never cover a start, goal, item, tag or hazard glyph.
 */
export function drawGridRoute(model: FiniteModel, policy: Int32Array, opts: { legend?: boolean } = {}): string | null {
  const lay = model.layout;
  if (!lay || lay.kind !== "grid") return null;
  const rows = lay.map.map((line) => [...line.padEnd(lay.cols, " ")]);
  const marked = new Set<number>();
  for (const s0 of startStates(model)) {
    const { states, actions } = tracePolicy(model, policy, s0);
    for (let i = 0; i < actions.length; i++) {
      const cell = lay.cellOf[states[i]];
      if (cell < 0 || marked.has(cell)) continue;
      marked.add(cell);
      const r = Math.floor(cell / lay.cols);
      const c = cell % lay.cols;
      if (COVERABLE.has(rows[r][c])) rows[r][c] = ARROWS[model.actions[actions[i]]] ?? "*";
    }
  }
  return rows.map((r) => r.join("")).join("\n") + "\n" + (opts.legend === false ? "" : gridLegend(lay.map) + "\n");
}

/** The legend entries (GRID_LEGEND) whose characters appear in the map, then the route arrows. */
export function gridLegend(map: readonly string[]): string {
  const text = map.join("");
  const entries = GRID_LEGEND.split(", ").filter((e) => {
    const [chars] = e.split(/ (?=[a-z])/);
    if (chars === "1-9") return /[1-9]/.test(text);
    return chars.split(" ").some((ch) => text.includes(ch));
  });
  return `legend: ${[...entries, "→ ↑ ↓ ← route (first move in each cell, from every start)"].join(", ")}`;
}

/** Positions of the loop as a strip with gates `|` and the route's velocity sign per position. */
export function drawTrackRoute(model: FiniteModel, policy: Int32Array, opts: { legend?: boolean } = {}): string | null {
  const lay = model.layout;
  if (!lay || lay.kind !== "track") return null;
  const strip = Array.from({ length: lay.length }, () => "·");
  const { states } = likelyPath(model, policy);
  for (const s of states) {
    const p = lay.posOf[s];
    const v = lay.velOf[s];
    if (p < 0) continue;
    strip[p] = v > 0 ? "»" : v < 0 ? "«" : "o";
  }
  const gates = Array.from({ length: lay.length }, (_, p) => (lay.gates.includes(p) ? "|" : " "));
  const legend = opts.legend === false ? "" : "legend: | gate (before the position under it), » moving forward, « moving backward, o stopped, · not on the route\n";
  return `gates ${gates.join("")}\nroute ${strip.join("")}\n${legend}`;
}

export function drawRoute(model: FiniteModel, policy: Int32Array, opts: { legend?: boolean } = {}): string | null {
  return drawGridRoute(model, policy, opts) ?? drawTrackRoute(model, policy, opts);
}
