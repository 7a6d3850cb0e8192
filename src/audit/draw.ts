/**
 * Evidence pictures for `gapwatch audit`: a loop's cells or a route marked on the grid map, or the
 * positions on the track strip. Pure; returns null when the model has no drawable layout.
 */
import type { FiniteModel } from "../model/types.js";

/** Grid: mark the cells of `states` with `mark` (keeping walls). Track: mark positions on the strip. */
export function drawStates(model: FiniteModel, states: readonly number[], mark = "o"): string | null {
  const lay = model.layout;
  if (!lay) return null;
  if (lay.kind === "grid") {
    const rows = lay.map.map((line) => [...line.padEnd(lay.cols, " ")]);
    for (const s of states) {
      const cell = lay.cellOf[s];
      if (cell < 0) continue;
      rows[Math.floor(cell / lay.cols)][cell % lay.cols] = mark;
    }
    return rows.map((r) => r.join("")).join("\n") + "\n";
  }
  // Per position: » moving forward, « backward, the mark when stopped, ⇄ when visited in several ways.
  const seen = Array.from({ length: lay.length }, () => new Set<number>());
  for (const s of states) {
    const p = lay.posOf[s];
    if (p >= 0) seen[p].add(Math.sign(lay.velOf[s]));
  }
  const strip = seen.map((set) => (set.size === 0 ? "·" : set.size > 1 ? "⇄" : set.has(1) ? "»" : set.has(-1) ? "«" : mark));
  const gates = Array.from({ length: lay.length }, (_, p) => (lay.gates.includes(p) ? "|" : " "));
  return `gates ${gates.join("")}\nloop  ${strip.join("")}\n`;
}
