import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { formatError } from "../../src/errors.js";
import { compileGrid, goalDistances, GRID_EVENTS, parseGridMap, readGridConfig, type GridConfig } from "../../src/model/grid.js";
import type { FiniteModel } from "../../src/model/types.js";
import { designerReward } from "../../src/model/reward.js";
import { catchInputError as catchError } from "../helpers/input-error.js";
import { valueIteration } from "../../src/solve/value-iteration.js";

const ALL_FEATURES = [...GRID_EVENTS];
function cfg(extra: Partial<GridConfig> = {}): GridConfig {
  return { name: "t", gamma: 0.9, horizon: 50, features: ALL_FEATURES, intentWeights: {}, ...extra };
}

/** Outcomes of (s, a) as plain records, feature values by name. */
function outcomes(m: FiniteModel, s: number, a: number) {
  const nF = m.features.length;
  const out: { next: string; p: number; ev: Record<string, number>; intent: number }[] = [];
  const k = s * m.nActions + a;
  for (let o = m.saStart[k]; o < m.saStart[k + 1]; o++) {
    const ev: Record<string, number> = {};
    m.features.forEach((f, i) => {
      const v = m.featureValues[o * nF + i];
      if (v !== 0) ev[f] = v;
    });
    out.push({ next: m.stateLabels[m.next[o]], p: m.prob[o], ev, intent: m.intent[o] });
  }
  return out;
}
const stateByLabel = (m: FiniteModel, label: string) => {
  const s = m.stateLabels.indexOf(label);
  if (s < 0) throw new Error(`no state ${label}; have ${m.stateLabels.join(", ")}`);
  return s;
};
const UP = 0, RIGHT = 1, DOWN = 2, LEFT = 3;

describe("parseGridMap: legend and errors", () => {
  it("reads every legend character into its cell kind", () => {
    const map = parseGridMap("@1.#*\n!+?%=\n^>v<.\n");
    expect(map.rows).toBe(3);
    expect(map.cols).toBe(5);
    expect(map.kind).toEqual([
      "start", "start", "floor", "wall", "goal",
      "hazard", "item", "tag", "fragile", "slick",
      "oneway", "oneway", "oneway", "oneway", "floor",
    ]);
    expect(Array.from(map.onewayDir.slice(10, 14))).toEqual([UP, RIGHT, DOWN, LEFT]);
    expect(map.starts).toEqual([{ cell: 0, char: "@" }, { cell: 1, char: "1" }]);
    expect(map.items).toEqual([6]);
    expect(map.tags).toEqual([7]);
    expect(map.goals).toEqual([4]);
    expect(map.hazards).toEqual([5]);
  });

  it("accepts CRLF line ends and trailing blank lines", () => {
    const map = parseGridMap("@.*\r\n...\r\n\r\n");
    expect(map.rows).toBe(2);
    expect(map.lines).toEqual(["@.*", "..."]);
  });

  it("names file, line and column of an unknown character in one line", () => {
    const e = catchError(() => parseGridMap("@..\n.X.\n..*\n", "envs/x/map.txt"));
    expect(e.code).toBe("grid.unknownChar");
    expect(e.where).toBe("envs/x/map.txt:2:2");
    const line = formatError(e);
    expect(line).not.toContain("\n");
    expect(line).toContain("envs/x/map.txt:2:2");
    expect(line).toContain('"X"');
  });

  it("calls a space a space", () => {
    const e = catchError(() => parseGridMap("@ *\n", "m.txt"));
    expect(e.code).toBe("grid.unknownChar");
    expect(e.where).toBe("m.txt:1:2");
    expect(e.message).toContain("space");
  });

  it("rejects ragged rows, naming the line", () => {
    const e = catchError(() => parseGridMap("@..\n...\n..\n", "m.txt"));
    expect(e.code).toBe("grid.raggedRow");
    expect(e.where).toBe("m.txt:3");
    expect(e.message).toContain("2 cells");
    expect(e.message).toContain("3");
  });

  it("rejects a map without a start and an empty map", () => {
    expect(catchError(() => parseGridMap("..*\n", "m.txt")).code).toBe("grid.noStart");
    expect(catchError(() => parseGridMap("\n\n", "m.txt")).code).toBe("grid.emptyMap");
  });

  it("rejects more flag cells than the state can carry", () => {
    expect(catchError(() => parseGridMap("@" + "+".repeat(9) + "?".repeat(8) + "*")).code).toBe("grid.tooManyFlags");
  });
});

describe("readGridConfig and compile-time checks", () => {
  const base = { name: "s", gamma: 0.95, horizon: 100, features: ["step", "goal"], intentWeights: { goal: 1 } };

  it("accepts a valid config", () => {
    expect(readGridConfig({ ...base, slip: 0.2, wait: true, groups: { "1": "a" } }, "scenario.json")).toMatchObject({ slip: 0.2, wait: true, groups: { "1": "a" } });
  });

  it("rejects an unknown feature, naming the list index", () => {
    const e = catchError(() => readGridConfig({ ...base, features: ["step", "coins"] }, "envs/s/scenario.json"));
    expect(e.code).toBe("grid.unknownFeature");
    expect(e.where).toBe("envs/s/scenario.json $.features[1]");
    expect(e.message).toContain("coins");
  });

  it("rejects an unknown intent event, bad gamma, horizon and slip", () => {
    expect(catchError(() => readGridConfig({ ...base, intentWeights: { joy: 1 } }, "f")).code).toBe("grid.unknownEvent");
    expect(catchError(() => readGridConfig({ ...base, gamma: 1.5 }, "f")).where).toBe("f $.gamma");
    expect(catchError(() => readGridConfig({ ...base, horizon: 2.5 }, "f")).where).toBe("f $.horizon");
    expect(catchError(() => readGridConfig({ ...base, slip: -0.1 }, "f")).where).toBe("f $.slip");
    expect(catchError(() => readGridConfig({ ...base, groups: { a: "x" } }, "f")).code).toBe("grid.config");
  });

  it("requires a group label for every digit start and a start for every group", () => {
    const e = catchError(() => compileGrid(cfg(), "@.2\n..*\n", "m.txt"));
    expect(e.code).toBe("grid.unknownGroup");
    expect(e.where).toBe("m.txt:1:3");
    expect(catchError(() => compileGrid(cfg({ groups: { "3": "x" } }), "@.*\n", "m.txt")).code).toBe("grid.unusedGroup");
  });
});

describe("compileGrid: states, moves and events", () => {
  it("enumerates only reachable (cell, flags) states, starts first, one state per terminal cell", () => {
    // Corridor: start, item, floor, goal. Walls never become states; the item bit is set from c1 on.
    // BFS visits actions in index order (up, right, down, left), so from r0c1 it finds r0c2 before r0c0.
    const m = compileGrid(cfg(), "@+.*#\n", "m");
    expect(m.stateLabels).toEqual(["r0c0 items=0", "r0c1 items=1", "r0c2 items=1", "r0c0 items=1", "r0c3 goal"]);
    expect(m.nStates).toBe(5);
    expect(Array.from(m.terminal)).toEqual([0, 0, 0, 0, 1]);
    expect(Array.from(m.start)).toEqual([1, 0, 0, 0, 0]);
    expect(m.actions).toEqual(["up", "right", "down", "left"]);
  });

  it("moving into a wall or off the map stays in place with a bump", () => {
    const m = compileGrid(cfg(), "#.\n@*\n", "m");
    const s = stateByLabel(m, "r1c0");
    expect(outcomes(m, s, UP)).toEqual([{ next: "r1c0", p: 1, ev: { step: 1, bump: 1 }, intent: 0 }]); // wall
    expect(outcomes(m, s, LEFT)).toEqual([{ next: "r1c0", p: 1, ev: { step: 1, bump: 1 }, intent: 0 }]); // off the map
    expect(outcomes(m, s, DOWN)[0].ev).toEqual({ step: 1, bump: 1 });
    expect(outcomes(m, s, RIGHT)).toEqual([{ next: "r1c1 goal", p: 1, ev: { step: 1, goal: 1 }, intent: 0 }]);
  });

  it("hazards are terminal; intent is the weighted sum of the events", () => {
    const m = compileGrid(cfg({ intentWeights: { step: -0.1, hazard: -10, goal: 2 } }), "!@*\n", "m");
    const s = stateByLabel(m, "r0c1");
    expect(outcomes(m, s, LEFT)).toEqual([{ next: "r0c0 hazard", p: 1, ev: { step: 1, hazard: 1 }, intent: -10.1 }]);
    expect(outcomes(m, s, RIGHT)[0].intent).toBeCloseTo(1.9, 12);
    expect(m.terminal[stateByLabel(m, "r0c0 hazard")]).toBe(1);
  });

  it("overshoot on a slick cell: (1 - slip) one cell, slip one cell further in the same direction", () => {
    // Our legend (envs/README.md): a move from "=" that reaches a non-terminal cell carries on one more
    // cell with probability slip when that cell can be entered, firing slip; both cells' events count.
    const m = compileGrid(cfg({ slip: 0.3, intentWeights: { fragile: -1 } }), "@=.%*\n.....\n", "m");
    const s = stateByLabel(m, "r0c1");
    expect(outcomes(m, s, RIGHT)).toEqual([
      { next: "r0c2", p: 0.7, ev: { step: 1 }, intent: 0 },
      { next: "r0c3", p: 0.3, ev: { step: 1, slip: 1, fragile: 1 }, intent: -1 }, // carried on into the fragile cell
    ]);
    for (let a = 0; a < 4; a++) expect(outcomes(m, s, a).reduce((t, o) => t + o.p, 0)).toBeCloseTo(1, 15);
    // Sideways moves never leave the line of motion: down from r0c1 lands on r1c1 (nothing beyond it).
    expect(outcomes(m, s, DOWN)).toEqual([{ next: "r1c1", p: 1, ev: { step: 1 }, intent: 0 }]);
    // Moves from ordinary cells never overshoot, even onto a slick one.
    expect(outcomes(m, stateByLabel(m, "r0c0"), RIGHT)).toEqual([{ next: "r0c1", p: 1, ev: { step: 1 }, intent: 0 }]);
  });

  it("no overshoot into a wall, past a terminal cell, or when the move bumps", () => {
    const m = compileGrid(cfg({ slip: 0.2 }), "#=.#\n@=*.\n", "m");
    // Up from r1c1 reaches r0c1 with a wall beyond: one outcome.
    expect(outcomes(m, stateByLabel(m, "r1c1"), UP)).toEqual([{ next: "r0c1", p: 1, ev: { step: 1 }, intent: 0 }]);
    // Right from r1c1 reaches the goal: terminal, so it never carries on past it.
    expect(outcomes(m, stateByLabel(m, "r1c1"), RIGHT)).toEqual([{ next: "r1c2 goal", p: 1, ev: { step: 1, goal: 1 }, intent: 0 }]);
    // Left from r0c1 is a bump.
    expect(outcomes(m, stateByLabel(m, "r0c1"), LEFT)).toEqual([{ next: "r0c1", p: 1, ev: { step: 1, bump: 1 }, intent: 0 }]);
  });

  it("one-way cells can be entered only in the arrow's direction and left freely", () => {
    const m = compileGrid(cfg(), "@>.\n..*\n", "m");
    expect(outcomes(m, stateByLabel(m, "r0c0"), RIGHT)[0].next).toBe("r0c1");
    const far = stateByLabel(m, "r0c2");
    expect(outcomes(m, far, LEFT)).toEqual([{ next: "r0c2", p: 1, ev: { step: 1, bump: 1 }, intent: 0 }]);
    expect(outcomes(m, stateByLabel(m, "r1c1"), UP)[0].ev).toEqual({ step: 1, bump: 1 });
    const arrow = stateByLabel(m, "r0c1");
    expect(outcomes(m, arrow, LEFT)[0].next).toBe("r0c0");
    expect(outcomes(m, arrow, DOWN)[0].next).toBe("r1c1");
  });

  it("items are picked up once and counted by deliver at the goal", () => {
    const m = compileGrid(cfg({ intentWeights: { deliver: 1 } }), "+@+*\n", "m");
    expect(outcomes(m, stateByLabel(m, "r0c1 items=00"), LEFT)).toEqual([{ next: "r0c0 items=10", p: 1, ev: { step: 1, pickup: 1 }, intent: 0 }]);
    // Back on the item cell: no second pickup.
    expect(outcomes(m, stateByLabel(m, "r0c1 items=10"), LEFT)).toEqual([{ next: "r0c0 items=10", p: 1, ev: { step: 1 }, intent: 0 }]);
    expect(outcomes(m, stateByLabel(m, "r0c2 items=11"), RIGHT)).toEqual([{ next: "r0c3 goal", p: 1, ev: { step: 1, goal: 1, deliver: 2 }, intent: 2 }]);
    expect(outcomes(m, stateByLabel(m, "r0c2 items=01"), RIGHT)[0].ev.deliver).toBe(1);
  });

  it("tag cells fire on every entry; tagFirst and the state flag only the first time", () => {
    const m = compileGrid(cfg(), "@?.*\n", "m");
    expect(outcomes(m, stateByLabel(m, "r0c0 tags=0"), RIGHT)).toEqual([{ next: "r0c1 tags=1", p: 1, ev: { step: 1, tag: 1, tagFirst: 1 }, intent: 0 }]);
    expect(outcomes(m, stateByLabel(m, "r0c2 tags=1"), LEFT)).toEqual([{ next: "r0c1 tags=1", p: 1, ev: { step: 1, tag: 1 }, intent: 0 }]);
    // Bumping while standing on a tag cell is not a re-entry.
    expect(outcomes(m, stateByLabel(m, "r0c1 tags=1"), UP)).toEqual([{ next: "r0c1 tags=1", p: 1, ev: { step: 1, bump: 1 }, intent: 0 }]);
  });

  it("fragile cells fire on every entry; wait stays put without entry events", () => {
    const m = compileGrid(cfg({ wait: true, intentWeights: { fragile: -1 } }), "@%*\n", "m");
    expect(m.actions).toEqual(["up", "right", "down", "left", "wait"]);
    expect(outcomes(m, 0, RIGHT)).toEqual([{ next: "r0c1", p: 1, ev: { step: 1, fragile: 1 }, intent: -1 }]);
    const bed = stateByLabel(m, "r0c1");
    expect(outcomes(m, bed, 4)).toEqual([{ next: "r0c1", p: 1, ev: { step: 1, wait: 1 }, intent: 0 }]);
    expect(outcomes(m, stateByLabel(m, "r0c0"), LEFT)[0].ev).toEqual({ step: 1, bump: 1 });
  });

  it("features are the declared subset of events, in the declared order", () => {
    const m = compileGrid(cfg({ features: ["goal", "step"], intentWeights: { fragile: -1 } }), "@%*\n", "m");
    expect(m.features).toEqual(["goal", "step"]);
    expect(outcomes(m, 0, RIGHT)).toEqual([{ next: "r0c1", p: 1, ev: { step: 1 }, intent: -1 }]);
  });

  it("groups label start states; the start distribution is uniform over start cells", () => {
    const m = compileGrid(cfg({ groups: { "1": "day", "2": "night" } }), "1.*\n..2\n@..\n", "m");
    const starts = [...m.start.keys()].filter((s) => m.start[s] > 0);
    expect(starts.map((s) => m.start[s])).toEqual([1 / 3, 1 / 3, 1 / 3]);
    expect(starts.map((s) => m.groups?.[s])).toEqual(["day", "night", null]);
  });

  it("goalDistance potential is minus the BFS move count, honouring walls and one-way cells", () => {
    // "v" can only be entered moving down (from off the map: never), so r0c2 must walk around the wall.
    const text = "*v.\n.#.\n@..\n";
    const m = compileGrid(cfg(), text, "m");
    const phi = m.potentials!.goalDistance;
    const at = (l: string) => phi[stateByLabel(m, l)];
    expect([at("r1c0"), at("r2c0"), at("r2c1"), at("r2c2"), at("r1c2"), at("r0c2")]).toEqual([-1, -2, -3, -4, -5, -6]);
    expect(m.stateLabels).not.toContain("r0c1"); // never enterable, so never enumerated
    // Hand count on the raw map (row-major); leaving the one-way cell is free, walls are -1.
    expect(Array.from(goalDistances(parseGridMap(text)))).toEqual([0, 1, 6, 1, -1, 5, 2, 3, 4]);
  });

  it("cells that cannot reach a goal get -(largest distance + 1); no goal means no potential", () => {
    const m = compileGrid(cfg(), "*.#@\n", "m");
    expect(m.potentials!.goalDistance[stateByLabel(m, "r0c3")]).toBe(-2);
    expect(compileGrid(cfg(), "@.!\n", "m").potentials).toBeUndefined();
  });

  it("observations are [row/rows, col/cols, flag bits] and the layout maps states to cells", () => {
    const m = compileGrid(cfg(), "@+\n?*\n", "m");
    expect(m.observations!.names).toEqual(["row", "col", "item0", "tag0"]);
    const s = stateByLabel(m, "r1c0 items=1 tags=1");
    expect(Array.from(m.observations!.values.slice(s * 4, s * 4 + 4))).toEqual([0.5, 0, 1, 1]);
    expect(m.layout).toMatchObject({ kind: "grid", rows: 2, cols: 2, map: ["@+", "?*"] });
    expect(m.layout!.kind === "grid" && m.layout!.cellOf[s]).toBe(2);
  });
});

describe("published values", () => {
  it("cliff walking v* (Sutton & Barto 2018, Example 6.6; REFERENCE_VALUES.md 1.3)", () => {
    // Our hazards end the episode instead of returning to the start; v* off the cliff is unchanged
    // because stepping into the cliff (-1 - 100) is worse than any walk to the goal (at most 14 steps).
    const text = ["............", "............", "............", "@!!!!!!!!!!*"].join("\n");
    const m = compileGrid(cfg({ gamma: 1, features: ["step", "hazard"] }), text, "cliff");
    const r = designerReward(m, { name: "book", weights: { step: -1, hazard: -100 } });
    const { values } = valueIteration(m, r, { gamma: 1 });
    const v = (row: number, col: number) => values[stateByLabel(m, `r${row}c${col}`)];
    // Book table: row 0 = -14 ... -3, row 1 = -13 ... -2, row 2 = -12 ... -1, start -13.
    for (let c = 0; c < 12; c++) {
      expect(v(0, c)).toBe(-14 + c);
      expect(v(1, c)).toBe(-13 + c);
      expect(v(2, c)).toBe(-12 + c);
    }
    expect(v(3, 0)).toBe(-13);
  });

  it("open field with lava: V = 2*GAMMA^(d-1) - 1 (shared/bench/PROBLEM.md section 6)", () => {
    // PROBLEM.md section 1's 8x6 example: lava on row 3, columns 0..5; goal bottom-right; reward -0.01
    // per ordinary landing, +1 goal, -1 lava; GAMMA = 0.99. Every landing fires `step`, so the goal
    // weight is 1 + 0.01 and the lava weight -1 + 0.01.
    const W = 8, H = 6, G = 0.99;
    const rows: string[] = [];
    for (let y = 0; y < H; y++) {
      let line = "";
      for (let x = 0; x < W; x++) line += x === 0 && y === 0 ? "@" : x === W - 1 && y === H - 1 ? "*" : y === 3 && x <= W - 3 ? "!" : ".";
      rows.push(line);
    }
    const m = compileGrid(cfg({ gamma: G, features: ["step", "goal", "hazard"] }), rows.join("\n"), "lava");
    const r = designerReward(m, { name: "bench", weights: { step: -0.01, goal: 1.01, hazard: -0.99 } });
    const sol = valueIteration(m, r, { gamma: G, tol: 1e-10 });
    let checked = 0;
    for (let y = 0; y < H; y++) {
      for (let x = 0; x < W; x++) {
        const label = `r${y}c${x}`;
        const s = m.stateLabels.indexOf(label);
        if (s < 0) continue; // lava and goal cells are terminal states with their own labels
        const d = W - 1 - x + (H - 1 - y); // the lava gap is at the right, so shortest paths are Manhattan
        expect(sol.values[s]).toBeCloseTo(2 * G ** (d - 1) - 1, 9);
        checked++;
      }
    }
    expect(checked).toBe(W * H - 1 - (W - 2));
    // PROBLEM.md: vstart = 2*0.99^(W+H-3) - 1, and iters = W + H - 1.
    expect(sol.values[0]).toBeCloseTo(2 * G ** (W + H - 3) - 1, 9);
    expect(sol.iters).toBe(W + H - 1);
  });
});

describe("property: random small maps compile to valid models", () => {
  const chars = [".", ".", ".", "#", "*", "!", "+", "?", "%", "=", "^", ">", "v", "<", "@"];
  const mapArb = fc
    .record({
      rows: fc.integer({ min: 1, max: 5 }),
      cols: fc.integer({ min: 1, max: 5 }),
      seedCells: fc.array(fc.constantFrom(...chars), { minLength: 25, maxLength: 25 }),
      startAt: fc.nat(24),
      slip: fc.constantFrom(0, 0.1, 0.5, 1),
      wait: fc.boolean(),
    })
    .map(({ rows, cols, seedCells, startAt, slip, wait }) => {
      const cells = seedCells.slice(0, rows * cols);
      cells[startAt % (rows * cols)] = "@";
      const lines: string[] = [];
      for (let r = 0; r < rows; r++) lines.push(cells.slice(r * cols, (r + 1) * cols).join(""));
      return { text: lines.join("\n"), slip, wait };
    });

  it("every (s, a) row of outcome probabilities sums to 1 and next states are in range", () => {
    fc.assert(
      fc.property(mapArb, ({ text, slip, wait }) => {
        const m = compileGrid(cfg({ slip, wait, intentWeights: { hazard: -5, deliver: 1, fragile: -1 } }), text, "prop");
        const nA = m.nActions;
        expect(nA).toBe(wait ? 5 : 4);
        for (let k = 0; k < m.nStates * nA; k++) {
          let sum = 0;
          for (let o = m.saStart[k]; o < m.saStart[k + 1]; o++) {
            expect(m.next[o]).toBeGreaterThanOrEqual(0);
            expect(m.next[o]).toBeLessThan(m.nStates);
            sum += m.prob[o];
          }
          expect(Math.abs(sum - 1)).toBeLessThan(1e-12);
        }
        let startSum = 0;
        for (const p of m.start) startSum += p;
        expect(startSum).toBeCloseTo(1, 12);
        expect(m.stateLabels.length).toBe(m.nStates);
        expect(m.observations!.values.length).toBe(m.nStates * m.observations!.dim);
      }),
      { numRuns: 200 },
    );
  });
});
