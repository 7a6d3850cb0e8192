/**
 * The grid family's inputs: the map text (legend, parsing, the `grid.*` errors with line and column) and
 * the family keys of scenario.json (`readGridConfig`). The legend and the model it compiles to are
 * described in grid.ts.
 */
import { InputError } from "../errors.js";


export const GRID_EVENTS = ["step", "bump", "wait", "goal", "hazard", "pickup", "deliver", "tag", "tagFirst", "fragile", "slip"] as const;
export type GridEvent = (typeof GRID_EVENTS)[number];

export const MOVE_ACTIONS = ["up", "right", "down", "left"] as const;
/** Row and column offsets of the four moves, in action order. */
export const DR = [-1, 0, 1, 0];
export const DC = [0, 1, 0, -1];

export type CellKind = "floor" | "wall" | "start" | "goal" | "hazard" | "item" | "tag" | "fragile" | "slick" | "oneway";

const KIND_OF: Record<string, CellKind> = {
  ".": "floor",
  "#": "wall",
  "@": "start",
  "*": "goal",
  "!": "hazard",
  "+": "item",
  "?": "tag",
  "%": "fragile",
  "=": "slick",
  "^": "oneway",
  ">": "oneway",
  v: "oneway",
  "<": "oneway",
};
/** Direction index (action order) a one-way character allows entering with. */
const ONEWAY_DIR: Record<string, number> = { "^": 0, ">": 1, v: 2, "<": 3 };

export const GRID_LEGEND =
  ". floor, # wall, @ start, 1-9 start with a group, * goal, ! hazard, + item, ? tag, % fragile, = slick, ^ > v < one-way";

/** Hard limits that keep the enumerated state space small. */
export const MAX_FLAG_BITS = 16;
export const MAX_CELLS = 10_000;
export const MAX_STATES = 200_000;

export interface GridMap {
  rows: number;
  cols: number;
  /** The map text, one string per row. */
  lines: string[];
  /** Kind per cell, row-major. */
  kind: CellKind[];
  /** Allowed entry direction per cell for one-way cells, else -1. */
  onewayDir: Int8Array;
  /** Start cells in reading order and the legend character of each ("@" or a digit). */
  starts: { cell: number; char: string }[];
  /** Item cells and tag cells in reading order; the position is the bit index. */
  items: number[];
  tags: number[];
  goals: number[];
  hazards: number[];
}

/** Parse a map. Pure. `source` names the file in error messages (`file:line:column`). */
export function parseGridMap(text: string, source = "map"): GridMap {
  const raw = text.replace(/\r\n?/g, "\n").split("\n");
  while (raw.length > 0 && raw[raw.length - 1] === "") raw.pop();
  if (raw.length === 0) throw new InputError("grid.emptyMap", "the map has no rows; draw at least one row of cells", source);
  const cols = raw[0].length;
  if (cols === 0) throw new InputError("grid.emptyRow", "line 1 is empty; every row needs at least one cell", `${source}:1`);
  const kind: CellKind[] = [];
  const onewayDir: number[] = [];
  const starts: { cell: number; char: string }[] = [];
  const items: number[] = [];
  const tags: number[] = [];
  const goals: number[] = [];
  const hazards: number[] = [];
  for (let r = 0; r < raw.length; r++) {
    const line = raw[r];
    if (line.length !== cols) {
      throw new InputError(
        "grid.raggedRow",
        `row has ${line.length} cells but line 1 has ${cols}; every row must have the same width (pad with # or .)`,
        `${source}:${r + 1}`,
      );
    }
    for (let c = 0; c < cols; c++) {
      const ch = line[c];
      const cell = r * cols + c;
      let k: CellKind | undefined = KIND_OF[ch];
      if (k === undefined && ch >= "1" && ch <= "9") k = "start";
      if (k === undefined) {
        const shown = ch === " " ? "space" : ch === "\t" ? "tab" : JSON.stringify(ch);
        throw new InputError("grid.unknownChar", `unknown map character ${shown}; the legend is: ${GRID_LEGEND}`, `${source}:${r + 1}:${c + 1}`);
      }
      kind.push(k);
      onewayDir.push(k === "oneway" ? ONEWAY_DIR[ch] : -1);
      if (k === "start") starts.push({ cell, char: ch });
      else if (k === "item") items.push(cell);
      else if (k === "tag") tags.push(cell);
      else if (k === "goal") goals.push(cell);
      else if (k === "hazard") hazards.push(cell);
    }
  }
  const rows = raw.length;
  if (rows * cols > MAX_CELLS) {
    throw new InputError("grid.tooLarge", `the map has ${rows * cols} cells; at most ${MAX_CELLS} are supported`, source);
  }
  if (starts.length === 0) {
    throw new InputError("grid.noStart", "the map has no start cell; mark at least one with @ or a digit 1-9", source);
  }
  if (items.length + tags.length > MAX_FLAG_BITS) {
    throw new InputError(
      "grid.tooManyFlags",
      `the map has ${items.length} item (+) and ${tags.length} tag (?) cells; together at most ${MAX_FLAG_BITS} are supported`,
      source,
    );
  }
  return { rows, cols, lines: raw, kind, onewayDir: Int8Array.from(onewayDir), starts, items, tags, goals, hazards };
}

/** The scenario.json keys the grid family reads (validated by `readGridConfig`). */
export interface GridConfig {
  name: string;
  gamma: number;
  horizon: number;
  /** Designer features: event names a reward variant may weight. */
  features: string[];
  /** Held-out intent: weight per event; intent increment = sum of weight * event value. */
  intentWeights: Record<string, number>;
  /** Overshoot probability of moves from slick cells (default 0). */
  slip?: number;
  /** Add a fifth action, "wait". */
  wait?: boolean;
  /** Group label per start digit, e.g. {"1": "north-store"}. */
  groups?: Record<string, string>;
  description?: string;
}

export function isEvent(name: string): name is GridEvent {
  return (GRID_EVENTS as readonly string[]).includes(name);
}

/** Validate the grid keys of a parsed scenario.json. `where` names the file for messages. */
export function readGridConfig(meta: Record<string, unknown>, where: string): GridConfig {
  const bad = (key: string, msg: string): never => {
    throw new InputError(`grid.config`, msg, `${where} $.${key}`);
  };
  const name = typeof meta.name === "string" ? meta.name : "grid";
  const gamma = meta.gamma;
  if (typeof gamma !== "number" || !(gamma > 0 && gamma <= 1)) bad("gamma", `gamma must be a number in (0, 1], got ${JSON.stringify(gamma)}`);
  const horizon = meta.horizon;
  if (typeof horizon !== "number" || !Number.isInteger(horizon) || horizon < 1) {
    bad("horizon", `horizon must be a positive integer, got ${JSON.stringify(horizon)}`);
  }
  const features = meta.features;
  if (!Array.isArray(features) || features.some((f) => typeof f !== "string")) {
    bad("features", `features must be a list of event names (${GRID_EVENTS.join(", ")})`);
  }
  const fs = features as string[];
  fs.forEach((f, i) => {
    if (!isEvent(f)) {
      throw new InputError("grid.unknownFeature", `unknown feature "${f}"; grid features are event names: ${GRID_EVENTS.join(", ")}`, `${where} $.features[${i}]`);
    }
  });
  if (new Set(fs).size !== fs.length) bad("features", "features lists a name twice");
  const iw = meta.intentWeights;
  if (typeof iw !== "object" || iw === null || Array.isArray(iw)) bad("intentWeights", "intentWeights must be an object {event: weight}");
  const intentWeights: Record<string, number> = {};
  for (const [k, v] of Object.entries(iw as Record<string, unknown>)) {
    if (!isEvent(k)) {
      throw new InputError("grid.unknownEvent", `unknown event "${k}" in intentWeights; grid events: ${GRID_EVENTS.join(", ")}`, `${where} $.intentWeights.${k}`);
    }
    if (typeof v !== "number" || !Number.isFinite(v)) bad(`intentWeights.${k}`, `weight of "${k}" must be a finite number`);
    intentWeights[k] = v as number;
  }
  const cfg: GridConfig = { name, gamma: gamma as number, horizon: horizon as number, features: fs, intentWeights };
  if (meta.slip !== undefined) {
    const slip = meta.slip;
    if (typeof slip !== "number" || !(slip >= 0 && slip <= 1)) bad("slip", `slip must be a probability in [0, 1], got ${JSON.stringify(slip)}`);
    cfg.slip = slip as number;
  }
  if (meta.wait !== undefined) {
    if (typeof meta.wait !== "boolean") bad("wait", `wait must be true or false`);
    cfg.wait = meta.wait as boolean;
  }
  if (meta.groups !== undefined) {
    const g = meta.groups;
    if (typeof g !== "object" || g === null || Array.isArray(g)) bad("groups", `groups must be an object {"1": "label", ...}`);
    const groups: Record<string, string> = {};
    for (const [k, v] of Object.entries(g as Record<string, unknown>)) {
      if (!/^[1-9]$/.test(k)) bad(`groups.${k}`, `group keys are start digits 1-9, got "${k}"`);
      if (typeof v !== "string" || v === "") bad(`groups.${k}`, `group label of start "${k}" must be a non-empty string`);
      groups[k] = v as string;
    }
    cfg.groups = groups;
  }
  if (typeof meta.description === "string") cfg.description = meta.description;
  return cfg;
}
