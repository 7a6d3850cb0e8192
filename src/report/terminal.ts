/**
 * Pictures for the terminal: a policy's route drawn on a grid map, a track strip, and sparklines of a
 * run's score series. Pure functions; no I/O.
 */
import { likelyPath } from "../model/likely-path.js";
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

/** The grid map with the route of `policy` drawn as arrows (first action taken in each cell). */
export function drawGridRoute(model: FiniteModel, policy: Int32Array): string | null {
  const lay = model.layout;
  if (!lay || lay.kind !== "grid") return null;
  const rows = lay.map.map((line) => [...line.padEnd(lay.cols, " ")]);
  const { states, actions } = likelyPath(model, policy);
  const marked = new Set<number>();
  for (let i = 0; i < actions.length; i++) {
    const cell = lay.cellOf[states[i]];
    if (cell < 0 || marked.has(cell)) continue;
    marked.add(cell);
    const r = Math.floor(cell / lay.cols);
    const c = cell % lay.cols;
    rows[r][c] = ARROWS[model.actions[actions[i]]] ?? "*";
  }
  return rows.map((r) => r.join("")).join("\n") + "\n";
}

/** Positions of the loop as a strip with gates `|` and the route's velocity sign per position. */
export function drawTrackRoute(model: FiniteModel, policy: Int32Array): string | null {
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
  return `gates ${gates.join("")}\nroute ${strip.join("")}\n`;
}

export function drawRoute(model: FiniteModel, policy: Int32Array): string | null {
  return drawGridRoute(model, policy) ?? drawTrackRoute(model, policy);
}
