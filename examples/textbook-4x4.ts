// Sutton & Barto (2018), Example 4.1, as a simulator module: the 4x4 gridworld. Cells are numbered
// 0..15 row by row; cells 0 and 15 are terminal (the book's one terminal state, drawn twice). Moves
// up/down/left/right are deterministic, a move off the grid stays put, every step costs 1 (gamma 1).
// Each episode starts in one of the 14 non-terminal cells, uniformly. Intent here is the same as the
// designer's step cost: a sound specification, used to check that modules solve and train correctly.
import { defineEnv } from "gapwatch";

interface Cell {
  cell: number;
}
const ACTIONS = ["up", "down", "left", "right"] as const;
const isTerminal = (c: number) => c === 0 || c === 15;

function move(c: number, a: number): number {
  const r = Math.floor(c / 4);
  const col = c % 4;
  const [dr, dc] = [
    [-1, 0],
    [1, 0],
    [0, -1],
    [0, 1],
  ][a];
  const nr = r + dr;
  const nc = col + dc;
  return nr < 0 || nr > 3 || nc < 0 || nc > 3 ? c : nr * 4 + nc;
}

export default defineEnv<Cell>({
  name: "textbook-4x4",
  description: "Sutton & Barto (2018) Example 4.1: 4x4 gridworld, -1 per step, terminal corners",
  actions: ACTIONS,
  features: ["step"],
  gamma: 1,
  horizon: 200,
  reset: (rng) => ({ cell: 1 + rng.int(14) }),
  starts: () => Array.from({ length: 14 }, (_, i) => ({ state: { cell: i + 1 }, p: 1 / 14 })),
  key: (s) => String(s.cell),
  step(s, a) {
    if (!Number.isInteger(a) || a < 0 || a > 3) throw new Error(`invalid action ${a}; expected 0..3`);
    if (isTerminal(s.cell)) return { state: s, features: {}, intent: 0, terminated: true };
    const next = move(s.cell, a);
    return { state: { cell: next }, features: { step: 1 }, intent: -1, terminated: isTerminal(next) };
  },
  observe: (s) => [Math.floor(s.cell / 4) / 3, (s.cell % 4) / 3],
  rewards: { default: { weights: { step: -1 } } },
});
