/**
 * The grid family: a plain-text map plus a few keys of scenario.json compile to a FiniteModel.
 *
 * Map legend (one character per cell; every row the same width; no spaces or tabs):
 *
 *   .   floor
 *   #   wall: moving into it (or off the map) leaves the agent in place, a "bump"
 *   @   start cell without a group label
 *   1-9 start cell whose group label is declared in scenario.json `groups`, e.g. {"1": "north-store"}
 *   *   goal: terminal; entering it fires `goal`, and `deliver` = number of items carried
 *   !   hazard: terminal and catastrophic; entering it fires `hazard`
 *   +   item: the first entry picks it up (`pickup`) and sets its bit in the state; later entries are floor
 *   ?   tag (scan) cell: every entry from another cell fires `tag`; the first one also fires `tagFirst`
 *       and sets the cell's bit in the state (so "first time" is a feature of its own)
 *   %   fragile cell: passable, but every entry fires `fragile` (something there is damaged)
 *   =   slick cell: a move *from* it that reaches a non-terminal cell overshoots, with probability
 *       `slip`, one more cell in the same direction (when that cell can be entered), firing `slip`; the
 *       events of both cells entered count
 *   ^ > v <   one-way cell: can only be entered moving in the arrow's direction (else a bump); leaving
 *       it is free
 *
 * Actions, in index order: up, right, down, left, and "wait" when scenario.json has `"wait": true`.
 *
 * Events per transition (the vocabulary of `features` and `intentWeights`): step (1 on every
 * transition), bump, wait, goal, hazard, pickup, deliver, tag, tagFirst, fragile, slip.
 * A bump or a wait leaves the agent on its cell and fires no entry event (no tag, no fragile).
 *
 * State = (cell, item bits, tag bits); only states reachable from the start cells are enumerated (BFS
 * order, starts first). Each terminal cell is a single state (its flags no longer matter). Labels
 * read like "r3c4 items=01 tags=1" (bits in map reading order) or "r0c5 goal".
 *
 * Potentials: `goalDistance`, Phi(s) = -(fewest moves from the cell to a goal), honouring walls and
 * one-way cells and never passing through a terminal cell; cells that cannot reach a goal get
 * -(largest finite distance + 1). Present only when the map has a goal.
 * Observations: [row/rows, col/cols, item bits..., tag bits...].
 */
import { readFileSync } from "node:fs";
import { join } from "node:path";
import { InputError } from "../errors.js";
import { ModelBuilder } from "./builder.js";
import type { ScenarioMeta } from "./scenario.js";
import type { FiniteModel } from "./types.js";
import { DC, DR, GRID_EVENTS, isEvent, MAX_STATES, MOVE_ACTIONS, parseGridMap, readGridConfig, type GridConfig, type GridEvent, type GridMap } from "./grid-map.js";

export { GRID_EVENTS, GRID_LEGEND, MAX_CELLS, MAX_FLAG_BITS, MAX_STATES, MOVE_ACTIONS, parseGridMap, readGridConfig, type CellKind, type GridConfig, type GridEvent, type GridMap } from "./grid-map.js";

interface Transition {
  s: number;
  a: number;
  next: number;
  p: number;
  ev: Float64Array;
}

function popcount(x: number): number {
  let n = 0;
  while (x) {
    x &= x - 1;
    n++;
  }
  return n;
}

/**
 * Fewest moves from each cell to a goal (reverse BFS over allowed moves; terminal cells are never
 * passed through). -1 where no goal can be reached.
 */
export function goalDistances(map: GridMap): Int32Array {
  const { rows, cols, kind, onewayDir } = map;
  const n = rows * cols;
  const dist = new Int32Array(n).fill(-1);
  const queue: number[] = [];
  for (const g of map.goals) {
    dist[g] = 0;
    queue.push(g);
  }
  for (let qi = 0; qi < queue.length; qi++) {
    const c = queue[qi];
    const r = (c / cols) | 0;
    const col = c % cols;
    // A predecessor p reaches c by moving in direction d: p = c - offset(d).
    for (let d = 0; d < 4; d++) {
      if (onewayDir[c] >= 0 && onewayDir[c] !== d) continue;
      const pr = r - DR[d];
      const pc = col - DC[d];
      if (pr < 0 || pr >= rows || pc < 0 || pc >= cols) continue;
      const p = pr * cols + pc;
      const k = kind[p];
      if (dist[p] >= 0 || k === "wall" || k === "goal" || k === "hazard") continue;
      dist[p] = dist[c] + 1;
      queue.push(p);
    }
  }
  return dist;
}

/** Compile a grid from its validated config and map text. Pure. */
export function compileGrid(config: GridConfig, mapText: string, source = "map"): FiniteModel {
  const map = parseGridMap(mapText, source);
  const { rows, cols, kind, onewayDir } = map;
  const slip = config.slip ?? 0;
  const actions: string[] = [...MOVE_ACTIONS];
  if (config.wait) actions.push("wait");
  const groups = config.groups ?? {};
  for (const st of map.starts) {
    if (st.char !== "@" && groups[st.char] === undefined) {
      const r = (st.cell / cols) | 0;
      throw new InputError(
        "grid.unknownGroup",
        `start cell "${st.char}" has no group label; declare it in scenario.json "groups" (e.g. {"${st.char}": "my-group"}) or use @`,
        `${source}:${r + 1}:${(st.cell % cols) + 1}`,
      );
    }
  }
  for (const key of Object.keys(groups)) {
    if (!map.starts.some((s) => s.char === key)) {
      throw new InputError("grid.unusedGroup", `scenario.json declares group "${key}" (${groups[key]}) but the map has no start cell "${key}"`, source);
    }
  }
  for (const f of config.features) {
    if (!isEvent(f)) throw new InputError("grid.unknownFeature", `unknown feature "${f}"; grid features are event names: ${GRID_EVENTS.join(", ")}`, source);
  }
  for (const e of Object.keys(config.intentWeights)) {
    if (!isEvent(e)) throw new InputError("grid.unknownEvent", `unknown event "${e}" in intentWeights; grid events: ${GRID_EVENTS.join(", ")}`, source);
  }

  // Bit index per flag cell: items first, then tags.
  const nItems = map.items.length;
  const nTags = map.tags.length;
  const nBits = nItems + nTags;
  const bitOf = new Int32Array(rows * cols).fill(-1);
  map.items.forEach((c, i) => (bitOf[c] = i));
  map.tags.forEach((c, i) => (bitOf[c] = nItems + i));
  const itemMask = (1 << nItems) - 1;
  const E = Object.fromEntries(GRID_EVENTS.map((e, i) => [e, i])) as Record<GridEvent, number>;
  const nE = GRID_EVENTS.length;

  // State enumeration by BFS over (cell, flags); terminal cells collapse to one state each.
  const index = new Map<number, number>();
  const cellOfState: number[] = [];
  const flagsOfState: number[] = [];
  const stride = 2 ** nBits;
  const keyOf = (cell: number, flags: number) => (kind[cell] === "goal" || kind[cell] === "hazard" ? -1 - cell : cell * stride + flags);
  const stateOf = (cell: number, flags: number): number => {
    const key = keyOf(cell, flags);
    let s = index.get(key);
    if (s === undefined) {
      s = cellOfState.length;
      if (s >= MAX_STATES) throw new InputError("grid.tooManyStates", `more than ${MAX_STATES} reachable states; use fewer item/tag cells or a smaller map`, source);
      index.set(key, s);
      cellOfState.push(cell);
      flagsOfState.push(key < 0 ? 0 : flags);
    }
    return s;
  };
  for (const st of map.starts) stateOf(st.cell, 0);

  const transitions: Transition[] = [];
  /** Where a move from `cell` in direction `d` ends, or -1 for a bump. */
  const moveTarget = (cell: number, d: number): number => {
    const r = ((cell / cols) | 0) + DR[d];
    const c = (cell % cols) + DC[d];
    if (r < 0 || r >= rows || c < 0 || c >= cols) return -1;
    const t = r * cols + c;
    if (kind[t] === "wall") return -1;
    if (onewayDir[t] >= 0 && onewayDir[t] !== d) return -1;
    return t;
  };
  const isTerminalCell = (cell: number) => kind[cell] === "goal" || kind[cell] === "hazard";
  /** Apply the events of entering cell `t` with flags `f`; returns the new flags. */
  const enter = (t: number, f: number, ev: Float64Array): number => {
    const k = kind[t];
    if (k === "goal") {
      ev[E.goal] += 1;
      ev[E.deliver] += popcount(f & itemMask);
    } else if (k === "hazard") {
      ev[E.hazard] += 1;
    } else if (k === "item" || k === "tag") {
      // An item fires pickup on the first entry only; a tag fires tag on every entry, tagFirst on the first.
      if (k === "tag") ev[E.tag] += 1;
      const bit = 1 << bitOf[t];
      if (!(f & bit)) {
        ev[k === "item" ? E.pickup : E.tagFirst] += 1;
        f |= bit;
      }
    } else if (k === "fragile") {
      ev[E.fragile] += 1;
    }
    return f;
  };
  /** A move in direction `d`; with `overshoot`, the move carries on one more cell in the same direction. */
  const addMove = (s: number, a: number, cell: number, flags: number, d: number, p: number, overshoot: boolean) => {
    const ev = new Float64Array(nE);
    ev[E.step] = 1;
    const t = moveTarget(cell, d);
    let next: number;
    if (t < 0) {
      ev[E.bump] = 1;
      next = stateOf(cell, flags);
    } else {
      let f = enter(t, flags, ev);
      let end = t;
      if (overshoot) {
        ev[E.slip] = 1;
        end = moveTarget(t, d);
        f = enter(end, f, ev);
      }
      next = stateOf(end, f);
    }
    transitions.push({ s, a, next, p, ev });
  };
  for (let s = 0; s < cellOfState.length; s++) {
    const cell = cellOfState[s];
    if (isTerminalCell(cell)) continue;
    const flags = flagsOfState[s];
    for (let d = 0; d < 4; d++) {
      // A move from a slick cell overshoots by one cell with probability `slip`, when the cell it reaches
      // is not terminal and the next one in the same direction can be entered.
      const t = kind[cell] === "slick" && slip > 0 ? moveTarget(cell, d) : -1;
      if (t >= 0 && !isTerminalCell(t) && moveTarget(t, d) >= 0) {
        if (slip < 1) addMove(s, d, cell, flags, d, 1 - slip, false);
        addMove(s, d, cell, flags, d, slip, true);
      } else {
        addMove(s, d, cell, flags, d, 1, false);
      }
    }
    if (config.wait) {
      const ev = new Float64Array(nE);
      ev[E.step] = 1;
      ev[E.wait] = 1;
      transitions.push({ s, a: 4, next: s, p: 1, ev });
    }
  }

  const nS = cellOfState.length;
  const bits = (flags: number, from: number, n: number) => {
    let out = "";
    for (let i = 0; i < n; i++) out += (flags >> (from + i)) & 1 ? "1" : "0";
    return out;
  };
  const stateLabels = cellOfState.map((cell, s) => {
    const base = `r${(cell / cols) | 0}c${cell % cols}`;
    if (kind[cell] === "goal") return `${base} goal`;
    if (kind[cell] === "hazard") return `${base} hazard`;
    let label = base;
    if (nItems > 0) label += ` items=${bits(flagsOfState[s], 0, nItems)}`;
    if (nTags > 0) label += ` tags=${bits(flagsOfState[s], nItems, nTags)}`;
    return label;
  });

  const b = new ModelBuilder({
    name: config.name,
    nStates: nS,
    actions,
    features: config.features,
    gamma: config.gamma,
    horizon: config.horizon,
    stateLabels,
    description: config.description,
    source,
  });
  const featIdx = config.features.map((f) => E[f as GridEvent]);
  const iw = GRID_EVENTS.map((e) => config.intentWeights[e] ?? 0);
  const fv = new Float64Array(config.features.length);
  for (const t of transitions) {
    for (let i = 0; i < featIdx.length; i++) fv[i] = t.ev[featIdx[i]];
    let intent = 0;
    for (let e = 0; e < nE; e++) if (iw[e] !== 0) intent += iw[e] * t.ev[e];
    b.addOutcome(t.s, t.a, t.next, t.p, fv, intent);
  }
  for (let s = 0; s < nS; s++) if (kind[cellOfState[s]] === "goal" || kind[cellOfState[s]] === "hazard") b.setTerminal(s);
  const startStates = map.starts.map((st) => stateOf(st.cell, 0));
  for (const s of startStates) b.setStart(s, 1 / startStates.length);
  if (map.starts.some((st) => st.char !== "@")) {
    const g: (string | null)[] = new Array(nS).fill(null);
    map.starts.forEach((st, i) => (g[startStates[i]] = st.char === "@" ? null : groups[st.char]));
    b.setGroups(g);
  }
  if (map.goals.length > 0) {
    const dist = goalDistances(map);
    let maxD = 0;
    for (const d of dist) if (d > maxD) maxD = d;
    const phi = new Float64Array(nS);
    for (let s = 0; s < nS; s++) {
      const d = dist[cellOfState[s]];
      phi[s] = -(d >= 0 ? d : maxD + 1);
    }
    b.setPotential("goalDistance", phi);
  }
  const obsNames = ["row", "col", ...map.items.map((_, i) => `item${i}`), ...map.tags.map((_, i) => `tag${i}`)];
  const dim = obsNames.length;
  const obs = new Float64Array(nS * dim);
  for (let s = 0; s < nS; s++) {
    const cell = cellOfState[s];
    obs[s * dim] = ((cell / cols) | 0) / rows;
    obs[s * dim + 1] = (cell % cols) / cols;
    for (let i = 0; i < nBits; i++) obs[s * dim + 2 + i] = (flagsOfState[s] >> i) & 1;
  }
  b.setObservations(obsNames, obs);
  b.setLayout({ kind: "grid", rows, cols, map: map.lines, cellOf: Int32Array.from(cellOfState) });
  return b.build();
}

/** Compile envs/<name>/ : read the map file named by scenario.json `map` from `dir`. */
export function compileGridScenario(dir: string, meta: ScenarioMeta): FiniteModel {
  const where = join(dir, "scenario.json");
  if (typeof meta.map !== "string" || meta.map === "") {
    throw new InputError("grid.config", `"map" must name the map file in this folder, e.g. "map.txt"`, `${where} $.map`);
  }
  const config = readGridConfig({ ...meta, description: meta.description }, where);
  const mapFile = join(dir, meta.map);
  let text: string;
  try {
    text = readFileSync(mapFile, "utf8");
  } catch (e) {
    throw new InputError("grid.mapFile", `cannot read the map file: ${(e as Error).message}`, mapFile);
  }
  return compileGrid(config, text, mapFile);
}
