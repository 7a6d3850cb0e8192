/**
 * Layout families: a built-in scenario generates other layouts of itself from a layout seed.
 *
 * Layout 0 is the scenario as written (its map.txt or scenario.json), so nothing changes without a
 * layout. Layout N >= 1 is drawn from a seeded stream `createRng("gapwatch-layout/<family>/<N>")`
 * passed explicitly to the generator, so the same N always gives the same layout (on every machine:
 * seedrandom's Alea is specified bit for bit). Every generated layout is checked solvable before it
 * is returned (grid: every start reaches a goal; track and budget: always, by construction), and a
 * generator that cannot find one in MAX_ATTEMPTS draws says so (`env.layout`).
 *
 * Generators, per family:
 *  - grid, "shuffle" (default): the map is first stretched by 0-2 extra rows and 0-2 extra columns
 *    (each a copy of a random interior row or column, its special cells turned to floor), so sizes vary
 *    within the written size + 2; walls, slick and one-way cells keep their shape; then the special
 *    cells (starts with their group digits, goals, hazards, items, tags, fragile cells) are placed at
 *    random on the non-wall plain cells, keeping how many of each there are.
 *  - grid, "aisle-room" (scenario.json `layouts.generator`): a walled room of `rows` x `cols` interior
 *    cells (each drawn within its [min, max] range; rows odd) with the start at the west end of the
 *    middle row (the aisle) and the goal at its east end; `pots` fragile cells (a count drawn in its
 *    range), each placed in the aisle with probability `aisleShare`, else in a side bay. The layout
 *    records which pots lie in the aisle (`aislePots`): the only straight route crosses them.
 *  - track: the loop length drawn within +-8 of the written one (at least gates + vmax + 1), the gates
 *    (as many as written) at distinct random positions, the start at a random position.
 *  - budget: the number of units drawn within +-3 of the written one (1 .. horizon).
 * Pure (the caller reads the files); no global state.
 */
import { InputError } from "../errors.js";
import { createRng, type Rng } from "../rng/rng.js";
import { goalDistances } from "./grid.js";
import { parseGridMap } from "./grid-map.js";

/** Draws per layout before a generator gives up on finding a solvable one. */
export const MAX_ATTEMPTS = 200;

/** The explicit seeded stream of layout `n` of a family. */
export function layoutRng(family: string, n: number): Rng {
  return createRng(`gapwatch-layout/${family}/${n}`);
}

/** An integer drawn uniformly in [lo, hi]. */
function between(rng: Rng, lo: number, hi: number): number {
  return lo + rng.int(hi - lo + 1);
}

/** Fisher-Yates shuffle in place. */
function shuffle<T>(rng: Rng, xs: T[]): T[] {
  for (let i = xs.length - 1; i > 0; i--) {
    const j = rng.int(i + 1);
    [xs[i], xs[j]] = [xs[j], xs[i]];
  }
  return xs;
}

/** A grid map is solvable when every start cell reaches a goal (terminal cells are never passed). */
export function gridSolvable(lines: readonly string[]): boolean {
  const map = parseGridMap(lines.join("\n"));
  if (map.goals.length === 0) return false;
  const dist = goalDistances(map);
  return map.starts.every((s) => dist[s.cell] >= 0);
}

const SPECIAL = /^[@1-9*!+?%]$/;

/** Insert `extraRows` copies of random interior rows and `extraCols` of columns (special cells as floor). */
export function stretchGrid(base: readonly string[], rng: Rng, extraRows: number, extraCols: number): string[] {
  const plain = (text: string) => text.replace(/[@1-9*!+?%]/g, ".");
  const grid = base.slice();
  for (let k = 0; k < extraRows && grid.length > 2; k++) {
    const r = 1 + rng.int(grid.length - 2);
    grid.splice(r + 1, 0, plain(grid[r]));
  }
  let out = grid;
  for (let k = 0; k < extraCols && out[0].length > 2; k++) {
    const c = 1 + rng.int(out[0].length - 2);
    out = out.map((l) => l.slice(0, c + 1) + plain(l[c]) + l.slice(c + 1));
  }
  return out;
}

/** "shuffle": `base` stretched, then its special cells placed at random on its non-wall plain cells. */
export function shuffleGrid(original: readonly string[], rng: Rng, where = "map"): string[] {
  const base = stretchGrid(original, rng, rng.int(3), rng.int(3));
  const cells: { r: number; c: number }[] = [];
  const specials: string[] = [];
  base.forEach((line, r) => {
    for (let c = 0; c < line.length; c++) {
      const ch = line[c];
      if (ch === "." || SPECIAL.test(ch)) cells.push({ r, c });
      if (SPECIAL.test(ch)) specials.push(ch);
    }
  });
  for (let attempt = 0; attempt < MAX_ATTEMPTS; attempt++) {
    const grid = base.map((l) => l.replace(/[@1-9*!+?%]/g, ".").split(""));
    const spots = shuffle(rng, cells.slice());
    specials.forEach((ch, i) => (grid[spots[i].r][spots[i].c] = ch));
    const lines = grid.map((row) => row.join(""));
    if (gridSolvable(lines)) return lines;
  }
  throw new InputError("env.layout", `no solvable layout found in ${MAX_ATTEMPTS} draws`, where);
}

export interface AisleRoomOptions {
  rows: [number, number];
  cols: [number, number];
  pots: [number, number];
  aisleShare: number;
}

export interface AisleRoomLayout {
  lines: string[];
  /** Pots in the aisle (on the only straight route), as [row, col] of the map. */
  aislePots: [number, number][];
  /** Pots in the side bays. */
  bayPots: [number, number][];
}

function range(x: unknown, key: string, where: string, lo: number, hi: number): [number, number] {
  const ok = Array.isArray(x) && x.length === 2 && x.every((v) => Number.isInteger(v) && v >= lo && v <= hi) && x[0] <= x[1];
  if (!ok) throw new InputError("env.layouts", `${key} must be [min, max], integers within ${lo}..${hi}`, `${where} $.layouts.${key}`);
  return [x[0] as number, x[1] as number];
}

/** Read scenario.json `layouts` for the "aisle-room" generator. */
export function readAisleRoomOptions(raw: Record<string, unknown>, where: string): AisleRoomOptions {
  const share = raw.aisleShare;
  if (typeof share !== "number" || !(share >= 0 && share <= 1)) throw new InputError("env.layouts", "aisleShare must be a probability in [0, 1]", `${where} $.layouts.aisleShare`);
  return { rows: range(raw.rows, "rows", where, 3, 15), cols: range(raw.cols, "cols", where, 4, 30), pots: range(raw.pots, "pots", where, 0, 8), aisleShare: share };
}

/** "aisle-room": see the file comment. */
export function aisleRoom(opts: AisleRoomOptions, rng: Rng, where = "layouts"): AisleRoomLayout {
  const oddRows: number[] = [];
  for (let h = opts.rows[0]; h <= opts.rows[1]; h++) if (h % 2 === 1) oddRows.push(h);
  if (oddRows.length === 0) throw new InputError("env.layouts", "rows must admit an odd height (the aisle is the middle row)", `${where} $.layouts.rows`);
  for (let attempt = 0; attempt < MAX_ATTEMPTS; attempt++) {
    const h = oddRows[rng.int(oddRows.length)];
    const w = between(rng, opts.cols[0], opts.cols[1]);
    const k = between(rng, opts.pots[0], opts.pots[1]);
    const aisle = 1 + (h - 1) / 2;
    const grid: string[][] = [];
    for (let r = 0; r < h + 2; r++) grid.push(Array.from({ length: w + 2 }, (_, c) => (r === 0 || r === h + 1 || c === 0 || c === w + 1 ? "#" : ".")));
    grid[aisle][1] = "@";
    grid[aisle][w] = "*";
    const aislePots: [number, number][] = [];
    const bayPots: [number, number][] = [];
    for (let t = 0; t < k; t++) {
      let r: number;
      let c: number;
      if (rng.float() < opts.aisleShare) {
        r = aisle;
        c = between(rng, 2, w - 1);
      } else {
        r = between(rng, 1, h - 1);
        if (r >= aisle) r++;
        c = between(rng, 1, w);
      }
      if (grid[r][c] !== ".") continue;
      grid[r][c] = "%";
      (r === aisle ? aislePots : bayPots).push([r, c]);
    }
    const lines = grid.map((row) => row.join(""));
    if (gridSolvable(lines)) return { lines, aislePots, bayPots };
  }
  throw new InputError("env.layout", `no solvable layout found in ${MAX_ATTEMPTS} draws`, where);
}

/** Track: new length, gate positions and start; see the file comment. */
export function trackLayout(meta: { length: number; vmax: number; gates: number[] }, rng: Rng): { length: number; gates: number[]; start: number } {
  const nG = meta.gates.length;
  const lo = Math.max(meta.length - 8, nG + meta.vmax + 1, 2);
  const length = between(rng, lo, Math.max(lo, meta.length + 8));
  const spots = shuffle(rng, Array.from({ length }, (_, i) => i));
  const gates = spots.slice(0, nG).sort((a, b) => a - b);
  return { length, gates, start: rng.int(length) };
}

/** Budget: a new number of units; see the file comment. */
export function budgetLayout(meta: { budget: number; horizon: number }, rng: Rng): { budget: number } {
  const lo = Math.max(1, meta.budget - 3);
  const hi = Math.max(lo, Math.min(64, meta.horizon, meta.budget + 3));
  return { budget: between(rng, lo, hi) };
}
