import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { modelChoiceGraph } from "../../src/audit/choice-graph.js";
import { karpWalkTable, maxMeanCycle, minMeanCycle, type MeanCycle } from "../../src/audit/cycles.js";
import { stronglyConnectedComponents, type EdgeListDigraph, type GraphEdge } from "../../src/audit/mean-cycle/graph.js";
import { ModelBuilder } from "../../src/model/builder.js";
import { createRng } from "../../src/rng/rng.js";
import { InputError } from "../../src/errors.js";

const I = Infinity;

function g(n: number, list: [number, number, number][]): EdgeListDigraph<string> {
  return { n, edges: list.map(([from, to, weight]) => ({ from, to, weight, label: `${from}->${to}` })) };
}

/** LightGraphs uses 1-based vertices; shift to 0-based. */
function g1(n: number, list: [number, number, number][]): EdgeListDigraph<string> {
  return g(n, list.map(([a, b, w]) => [a - 1, b - 1, w] as [number, number, number]));
}

/** The returned cycle is a real cycle of the graph: consecutive, closed, simple, with the reported mean. */
function expectRealCycle(graph: EdgeListDigraph<unknown>, c: MeanCycle<unknown>, tol = 1e-9): void {
  const L = c.edges.length;
  expect(L).toBeGreaterThan(0);
  expect(c.vertices.length).toBe(L);
  expect(new Set(c.vertices).size).toBe(L);
  let sum = 0;
  for (let i = 0; i < L; i++) {
    const e = graph.edges[c.edges[i]];
    expect(e.from).toBe(c.vertices[i]);
    expect(e.to).toBe(c.vertices[(i + 1) % L]);
    expect(c.weights[i]).toBe(e.weight);
    expect(c.labels[i]).toBe(e.label);
    sum += e.weight;
  }
  expect(Math.abs(sum / L - c.mean)).toBeLessThanOrEqual(tol * (1 + Math.abs(c.mean)));
}

function sortedCycle(c: MeanCycle<unknown>): number[] {
  return [...c.vertices].sort((a, b) => a - b);
}

/** Brute force: enumerate every simple cycle (each from its smallest vertex) and return min and max means. */
function bruteForceMeans(graph: EdgeListDigraph<unknown>): { min: number; max: number } | null {
  const out: GraphEdge<unknown>[][] = Array.from({ length: graph.n }, () => []);
  for (const e of graph.edges) out[e.from].push(e);
  let min = Infinity;
  let max = -Infinity;
  const onPath = new Array<boolean>(graph.n).fill(false);
  const dfs = (root: number, v: number, sum: number, len: number): void => {
    for (const e of out[v]) {
      if (e.to === root) {
        const mean = (sum + e.weight) / (len + 1);
        if (mean < min) min = mean;
        if (mean > max) max = mean;
      } else if (e.to > root && !onPath[e.to]) {
        onPath[e.to] = true;
        dfs(root, e.to, sum + e.weight, len + 1);
        onPath[e.to] = false;
      }
    }
  };
  for (let r = 0; r < graph.n; r++) {
    onPath[r] = true;
    dfs(r, r, 0, 0);
    onPath[r] = false;
  }
  return min === Infinity ? null : { min, max };
}

const smallGraph = (weight: fc.Arbitrary<number>) =>
  fc.integer({ min: 1, max: 7 }).chain((n) =>
    fc
      .array(fc.tuple(fc.integer({ min: 0, max: n - 1 }), fc.integer({ min: 0, max: n - 1 }), weight), { maxLength: 16 })
      .map((list) => g(n, list)),
  );

function randomGraph(n: number, m: number, seed: number): EdgeListDigraph<string> {
  const rng = createRng(seed);
  const list: [number, number, number][] = [];
  for (let i = 0; i < m; i++) list.push([rng.int(n), rng.int(n), Math.round((rng.float() * 20 - 10) * 1000) / 1000]);
  return g(n, list);
}

describe("Karp's walk table and formula (CLRS 3rd ed., Problem 24-5; REFERENCE_VALUES section 3)", () => {
  // Example A: edges 0->1 (1), 0->2 (10), 1->2 (3), 2->3 (2), 3->1 (0), 3->0 (8).
  const A = g(4, [
    [0, 1, 1],
    [0, 2, 10],
    [1, 2, 3],
    [2, 3, 2],
    [3, 1, 0],
    [3, 0, 8],
  ]);

  it("example A: delta_k(0, v) table matches the computed table", () => {
    // REFERENCE_VALUES section 3, example A table (computed).
    expect(karpWalkTable(A, 0)).toEqual([
      [0, I, I, I],
      [I, 1, 10, I],
      [I, I, 4, 12],
      [20, 12, I, 6],
      [14, 6, 15, I],
    ]);
  });

  it("example A: mu* = 5/3 on the cycle 1 -> 2 -> 3 -> 1 (Boost-style karp test value 1.666666666)", () => {
    const c = minMeanCycle(A)!;
    expect(c.mean).toBeCloseTo(5 / 3, 12);
    expect(c.method).toBe("karp");
    expect(sortedCycle(c)).toEqual([1, 2, 3]);
    expectRealCycle(A, c);
  });

  it("example B (OpenGenus): mu* = 1 on v1 -> v2 -> v4 -> v1", () => {
    const B = g1(5, [
      [1, 2, 1],
      [2, 4, 2],
      [4, 1, 0],
      [2, 5, 2],
      [5, 1, 2],
      [2, 3, 3],
      [3, 5, 1],
    ]);
    const c = minMeanCycle(B)!;
    expect(c.mean).toBeCloseTo(1, 12);
    expect(sortedCycle(c)).toEqual([0, 1, 3]);
    expectRealCycle(B, c);
    // The other cycles listed in the reference: C3 has the largest mean 7/4.
    const mx = maxMeanCycle(B)!;
    expect(mx.mean).toBeCloseTo(7 / 4, 12);
    expect(sortedCycle(mx)).toEqual([0, 1, 2, 4]);
    expectRealCycle(B, mx);
  });

  const c1Edges: [number, number][] = [
    [1, 7], [2, 7], [3, 9], [4, 2], [4, 7], [5, 2], [5, 9], [6, 2], [6, 7], [7, 2], [7, 9], [9, 11], [10, 7], [11, 7], [12, 9],
  ];

  it("C1 (LightGraphs karp.jl): lambda = 0.9 on cycle [9, 11, 7]", () => {
    const w = [1, 1, 1.1, 1.2, 1, 1, 1.3, 1.2, 1, 1, 1.3, 0.4, 1, 1, 1.2];
    const G = g1(12, c1Edges.map(([a, b], i) => [a, b, w[i]]));
    const c = minMeanCycle(G)!;
    expect(c.mean).toBeCloseTo(0.9, 12);
    expect(sortedCycle(c)).toEqual([6, 8, 10]);
    expectRealCycle(G, c);
    // The competing cycle 2 <-> 7 has mean 1 and is the maximum.
    const mx = maxMeanCycle(G)!;
    expect(mx.mean).toBeCloseTo(1, 12);
    expect(sortedCycle(mx)).toEqual([1, 6]);
  });

  it("C2 (LightGraphs karp.jl): lambda = -0.04 on cycle [2, 7]", () => {
    const w = [-0.09, -0.06, -0.01, -0.19, -0.09, -0.02, -0.03, -0.19, -0.09, -0.02, -0.03, 0.39, -0.09, -0.06, -0.01];
    const G = g1(12, c1Edges.map(([a, b], i) => [a, b, w[i]]));
    const c = minMeanCycle(G)!;
    expect(c.mean).toBeCloseTo(-0.04, 12);
    expect(sortedCycle(c)).toEqual([1, 6]);
    expectRealCycle(G, c);
    // The cycle 7 -> 9 -> 11 -> 7 has mean 0.1, the maximum.
    expect(maxMeanCycle(G)!.mean).toBeCloseTo(0.1, 12);
  });

  it("C3 'tricky' (LightGraphs karp.jl): lambda = 0 on {3, 4}; -2 after subtracting 2", () => {
    const list: [number, number, number][] = [
      [1, 3, 1],
      [1, 2, 0],
      [3, 4, 0],
      [4, 1, 1],
      [4, 3, 0],
      [2, 3, 0],
      [2, 2, 1],
    ];
    const G = g1(4, list);
    const c = minMeanCycle(G)!;
    expect(c.mean).toBeCloseTo(0, 12);
    expect(sortedCycle(c)).toEqual([2, 3]);
    expectRealCycle(G, c);
    const G2 = g1(4, list.map(([a, b, w]) => [a, b, w - 2]));
    const c2 = minMeanCycle(G2)!;
    expect(c2.mean).toBeCloseTo(-2, 12);
    expect(sortedCycle(c2)).toEqual([2, 3]);
  });

  it("C4 (LightGraphs karp.jl): self-loops and an isolated vertex, lambda = -1 on [2]", () => {
    const G = g1(3, [
      [1, 1, 0],
      [2, 2, -1],
    ]);
    const c = minMeanCycle(G)!;
    expect(c.mean).toBe(-1);
    expect(c.vertices).toEqual([1]);
    expectRealCycle(G, c);
    expect(maxMeanCycle(G)!.vertices).toEqual([0]);
  });

  it("acyclic graphs have no mean cycle", () => {
    expect(minMeanCycle(g(3, [[0, 1, 1], [1, 2, 1]]))).toBeNull();
    expect(maxMeanCycle(g(0, []))).toBeNull();
  });

  it("rejects edges outside the vertex range and non-finite weights", () => {
    expect(() => minMeanCycle(g(2, [[0, 2, 1]]))).toThrow(InputError);
    expect(() => minMeanCycle(g(2, [[0, 1, NaN]]))).toThrow(InputError);
  });
});

describe("property: agrees with brute-force simple-cycle enumeration (graphs of <= 7 vertices)", () => {
  for (const [name, weight] of [
    ["integer weights", fc.integer({ min: -9, max: 9 })],
    ["real weights", fc.double({ min: -5, max: 5, noNaN: true })],
  ] as const) {
    it(`min and max mean, ${name}`, () => {
      fc.assert(
        fc.property(smallGraph(weight), (G) => {
          const bf = bruteForceMeans(G);
          const mn = minMeanCycle(G);
          const mx = maxMeanCycle(G);
          if (!bf) {
            expect(mn).toBeNull();
            expect(mx).toBeNull();
            return;
          }
          expect(Math.abs(mn!.mean - bf.min)).toBeLessThan(1e-9);
          expect(Math.abs(mx!.mean - bf.max)).toBeLessThan(1e-9);
          expectRealCycle(G, mn!);
          expectRealCycle(G, mx!);
          // Forcing the fallback gives the same answer.
          const h = minMeanCycle(G, { method: "howard" })!;
          expect(h.method).toBe("howard");
          expect(h.certified).toBe(true);
          expect(Math.abs(h.mean - bf.min)).toBeLessThan(1e-9);
          expectRealCycle(G, h);
          expect(Math.abs(maxMeanCycle(G, { method: "howard" })!.mean - bf.max)).toBeLessThan(1e-9);
        }),
        { numRuns: 1500 },
      );
    });
  }
});

describe("large-component fallback (Howard's policy iteration) agrees with Karp", () => {
  it("random graphs of 30..400 vertices, min and max", () => {
    for (let seed = 1; seed <= 30; seed++) {
      const n = 30 + ((seed * 37) % 370);
      const G = randomGraph(n, n * 3, seed);
      for (const fn of [minMeanCycle, maxMeanCycle]) {
        const k = fn(G, { method: "karp" })!;
        const h = fn(G, { method: "howard" })!;
        expect(k.method).toBe("karp");
        expect(h.method).toBe("howard");
        expect(h.certified).toBe(true);
        expect(Math.abs(h.mean - k.mean)).toBeLessThan(1e-9);
        expectRealCycle(G, h);
        expectRealCycle(G, k);
      }
    }
  });

  it("auto switches to Howard above karpMaxVertices", () => {
    const G = randomGraph(200, 600, 99);
    const auto = minMeanCycle(G, { karpMaxVertices: 50 })!;
    expect(auto.method).toBe("howard");
    expect(Math.abs(auto.mean - minMeanCycle(G)!.mean)).toBeLessThan(1e-9);
  });

  it("a 100k-vertex ring with chords: no recursion limit, exact mean by construction", () => {
    // Ring 0 -> 1 -> ... -> n-1 -> 0 with weight 2 per edge, plus chords i -> i+2 of weight 5
    // (the chord replaces two ring edges of total 4 by 5, so it only raises the mean). Minimum mean: 2.
    // A single cheap 3-cycle 10 -> 11 -> 12 -> 10 via a back edge of weight -3 has mean (2+2-3)/3 = 1/3.
    const n = 100_000;
    const edges: GraphEdge<undefined>[] = [];
    for (let i = 0; i < n; i++) edges.push({ from: i, to: (i + 1) % n, weight: 2 });
    for (let i = 0; i < n; i += 7) edges.push({ from: i, to: (i + 2) % n, weight: 5 });
    const ring = { n, edges };
    const c = minMeanCycle(ring)!;
    expect(c.method).toBe("howard");
    expect(c.mean).toBe(2);
    expect(c.edges.length).toBe(n);
    edges.push({ from: 12, to: 10, weight: -3 });
    const c2 = minMeanCycle({ n, edges })!;
    expect(c2.mean).toBeCloseTo(1 / 3, 12);
    expect(sortedCycle(c2)).toEqual([10, 11, 12]);
    expect(maxMeanCycle({ n, edges })!.mean).toBeGreaterThan(2);
  });
});

describe("strongly connected components (iterative Tarjan)", () => {
  it("two 2-cycles joined by a bridge, and a lone vertex", () => {
    // 0 <-> 1 -> 2 <-> 3, 4 alone.
    const start = Int32Array.from([0, 1, 3, 4, 5, 5]);
    const to = Int32Array.from([1, 0, 2, 3, 2]);
    const cc = stronglyConnectedComponents(5, start, to);
    expect(cc.count).toBe(3);
    expect(cc.comp[0]).toBe(cc.comp[1]);
    expect(cc.comp[2]).toBe(cc.comp[3]);
    expect(cc.comp[0]).not.toBe(cc.comp[2]);
    expect(cc.comp[4]).not.toBe(cc.comp[0]);
  });
});

describe("modelChoiceGraph", () => {
  // A 3-state model: state 0 "loop" -> 1 for sure, 1 "loop" -> 0 for sure (a certain 2-cycle);
  // state 0 "try" -> terminal 2 with p 0.9, back to 0 with p 0.1.
  function model() {
    const b = new ModelBuilder({ name: "choice", nStates: 3, actions: ["loop", "try"], features: ["pts"], gamma: 0.9, horizon: 50 });
    b.addOutcome(0, 0, 1, 1, [1]);
    b.addOutcome(0, 1, 2, 0.9, [5]);
    b.addOutcome(0, 1, 0, 0.1, [3]);
    b.addOutcome(1, 0, 0, 1, [2]);
    b.addOutcome(1, 1, 1, 1, [0]);
    b.setTerminal(2).setStart(0, 1);
    return b.build();
  }

  it("keeps only certain outcomes by default, labels edges with action and outcome", () => {
    const m = model();
    const reward = Float64Array.from({ length: m.next.length }, (_, o) => m.featureValues[o]);
    const G = modelChoiceGraph(m, reward);
    expect(G.n).toBe(3);
    expect(Array.from(G.start)).toEqual([0, 1, 3, 3]);
    const c = maxMeanCycle(G)!;
    // Cycle 0 -loop-> 1 -loop-> 0 with reward 1 and 2: mean 1.5 (hand-computed), beats the self-loop 1 -try-> 1 (0).
    expect(c.mean).toBeCloseTo(1.5, 12);
    expect(sortedCycle(c)).toEqual([0, 1]);
    for (const l of c.labels) expect(l!.action).toBe(0);
    for (let i = 0; i < c.edges.length; i++) expect(m.next[c.labels[i]!.outcome]).toBe(c.vertices[(i + 1) % c.vertices.length]);
  });

  it("optimistic edges (minProb 0.1) add the lucky self-loop 0 -try-> 0 with reward 3", () => {
    const m = model();
    const reward = Float64Array.from({ length: m.next.length }, (_, o) => m.featureValues[o]);
    const c = maxMeanCycle(modelChoiceGraph(m, reward, { minProb: 0.1 }))!;
    expect(c.mean).toBe(3);
    expect(c.vertices).toEqual([0]);
    expect(c.labels[0]!.action).toBe(1);
  });
});
