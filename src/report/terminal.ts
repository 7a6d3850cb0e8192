/**
 * Pictures for the terminal: a policy's route drawn on a grid map, and a track strip. Pure functions
 * of a model and a policy; no I/O.
 */
import { likelyPath } from "../model/likely-path.js";
import type { FiniteModel } from "../model/types.js";

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
