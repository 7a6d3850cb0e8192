/**
 * Minimum and maximum mean cycles of a weighted digraph. The graph plumbing is in ./mean-cycle/graph.ts,
 * the two per-component methods in ./mean-cycle/karp.ts and ./mean-cycle/howard.ts; the
 * "deterministic-choice graph" of a finite model is in ./choice-graph.ts.
 *
 * Method. The graph is split into strongly connected components (Tarjan's algorithm, written with an
 * explicit stack so 100k-vertex graphs do not hit the call-stack limit). Every cycle lies inside one
 * component, so the answer is the best over components.
 *  - Components with at most `karpMaxVertices` vertices (default 2000) use Karp's formula
 *    (Karp 1978; CLRS 3rd ed., Problem 24-5): with delta_k(v) the minimum weight of a walk of exactly k
 *    edges from a source inside the component,
 *        mu* = min_v max_{0 <= k < m} (delta_m(v) - delta_k(v)) / (m - k).
 *    The table is (m + 1) x m numbers plus the same number of predecessor edges (12 bytes a cell:
 *    2000 vertices take about 48 MB), which is why large components use the fallback.
 *    The cycle is extracted by walking back the predecessor edges of the m-edge minimum walk to the
 *    argmin vertex v* until a vertex repeats. Why this is a minimum mean cycle: after subtracting mu*
 *    from every weight there is no negative cycle and delta_m(v*) equals the shortest-path distance
 *    to v*, so removing any closed sub-walk from that walk cannot make it cheaper; the closed sub-walk
 *    therefore has reduced weight exactly 0, i.e. mean mu*. The extracted cycle's mean is checked
 *    against the formula value (a mismatch is an internal error).
 *  - Larger components use Howard's policy iteration for cycle means (Cochet-Terrasson, Cohen,
 *    Gaubert, McGettrick & Quadrat 1998; Dasdan 2004 — cited from memory): every vertex picks one
 *    out-edge, each cycle of that functional graph gets its mean eta and a potential x, and vertices
 *    switch first to edges reaching a smaller eta, then to edges that lower x; at the fixed point the
 *    potentials certify optimality (w(u,v) - mu + x(v) >= x(u) - eps on every edge of the component,
 *    which summed around any cycle gives mean >= mu - eps). The returned cycle is a real cycle of the
 *    graph and its mean is recomputed from its own edges. Tests check it agrees with Karp on random
 *    graphs; `certified` on the result reports the potential check.
 *
 * The maximum mean cycle is the minimum mean cycle of the negated weights.
 *
 * Pure; no I/O. Hot loops run over typed arrays (CSR adjacency).
 */
import { InputError } from "../errors.js";
import { edgeSource, isCsr, stronglyConnectedComponents, subgraph, toCsr, type Components, type Digraph, type LocalCycle, type Sub } from "./mean-cycle/graph.js";
import { howardComponent } from "./mean-cycle/howard.js";
import { karpComponent, karpTableLocal } from "./mean-cycle/karp.js";

export type MeanCycleMethod = "karp" | "howard";

export interface MeanCycleOptions {
  /** "auto" (default): Karp up to `karpMaxVertices` vertices per component, Howard above. */
  method?: "auto" | MeanCycleMethod;
  /** Largest component solved with Karp's O(m^2)-memory table under "auto". Default 2000. */
  karpMaxVertices?: number;
  /** Cap on Howard's policy-improvement rounds (per component). Default 10000. */
  maxHowardIters?: number;
  /** The graph's strongly connected components (`stronglyConnectedComponents` of its CSR), when the caller has them already. */
  components?: Components;
}

export interface MeanCycle<L = unknown> {
  /** The optimal cycle mean (Karp: the formula value; Howard: the returned cycle's mean). */
  mean: number;
  /** Cycle vertices in order; `edges[i]` goes from `vertices[i]` to `vertices[(i + 1) % length]`. */
  vertices: number[];
  /** Edge ids of the cycle, in order. */
  edges: number[];
  /** Edge weights, in order (the original weights, also for `maxMeanCycle`). */
  weights: number[];
  /** Edge labels, in order (undefined where the graph has none). */
  labels: (L | undefined)[];
  /** Method used on the component that holds the cycle. */
  method: MeanCycleMethod;
  /** Karp: always true. Howard: the final potentials satisfy the optimality inequalities. */
  certified: boolean;
}

const DEFAULT_KARP_MAX = 2000;

function solveMinMean<L>(graph: Digraph<L>, sign: number, opts: MeanCycleOptions): MeanCycle<L> | null {
  const g = toCsr(graph, sign);
  const cc = opts.components ?? stronglyConnectedComponents(g.n, g.start, g.to);
  const method = opts.method ?? "auto";
  const karpMax = opts.karpMaxVertices ?? DEFAULT_KARP_MAX;
  const localIdx = new Int32Array(g.n);
  let best: { cyc: LocalCycle; sub: Sub; method: MeanCycleMethod } | null = null;
  for (let c = 0; c < cc.count; c++) {
    const size = cc.offset[c + 1] - cc.offset[c];
    if (size === 1) {
      // A single vertex holds a cycle only through a self-loop.
      const v = cc.order[cc.offset[c]];
      let has = false;
      for (let e = g.start[v]; e < g.start[v + 1]; e++) if (g.to[e] === v) has = true;
      if (!has) continue;
    }
    const sub = subgraph(g, cc, c, localIdx);
    const useKarp = method === "karp" || (method === "auto" && size <= karpMax);
    const cyc = useKarp ? karpComponent(sub) : howardComponent(sub, opts.maxHowardIters ?? 10_000);
    if (cyc && (!best || cyc.mean < best.cyc.mean)) best = { cyc, sub, method: useKarp ? "karp" : "howard" };
  }
  if (!best) return null;
  const { cyc, sub } = best;
  const edges = cyc.edges.map((e) => (g.eid ? g.eid[sub.slot[e]] : sub.slot[e]));
  const slots = cyc.edges.map((e) => sub.slot[e]);
  const vertices = cyc.edges.map((e) => sub.verts[edgeSource(sub.start, e)]);
  const weights = slots.map((s) => g.weight[s]);
  const labels = edges.map((e) => labelOf(graph, e));
  return { mean: sign * cyc.mean, vertices, edges, weights, labels, method: best.method, certified: cyc.certified };
}

function labelOf<L>(graph: Digraph<L>, e: number): L | undefined {
  if (isCsr(graph)) return graph.label ? graph.label(e) : undefined;
  return graph.edges[e].label;
}

/** A cycle of minimum mean weight, or null when the graph is acyclic. */
export function minMeanCycle<L>(graph: Digraph<L>, opts: MeanCycleOptions = {}): MeanCycle<L> | null {
  return solveMinMean(graph, 1, opts);
}

/** A cycle of maximum mean weight, or null when the graph is acyclic. */
export function maxMeanCycle<L>(graph: Digraph<L>, opts: MeanCycleOptions = {}): MeanCycle<L> | null {
  const r = solveMinMean(graph, -1, opts);
  // Normalize -0 to 0.
  if (r && r.mean === 0) r.mean = 0;
  return r;
}

/**
 * Karp's walk table for a whole graph: `table[k][v]` = minimum weight of a walk with exactly k edges
 * from `source` to v (Infinity if none), k = 0..n. For inspection and tests (CLRS Problem 24-5).
 */
export function karpWalkTable<L>(graph: Digraph<L>, source: number): number[][] {
  const g = toCsr(graph, 1);
  if (!(Number.isInteger(source) && source >= 0 && source < g.n)) {
    throw new InputError("input.graph", `source ${source} is outside 0..${g.n - 1}`, "source");
  }
  const verts = new Int32Array(g.n);
  for (let i = 0; i < g.n; i++) verts[i] = i;
  const weight = Float64Array.from(g.weight, (w) => g.sign * w);
  const slot = g.eid ?? Int32Array.from({ length: g.to.length }, (_, e) => e);
  const sub: Sub = { m: g.n, verts, start: g.start, to: g.to, weight, slot };
  const { d } = karpTableLocal(sub, source, g.n + 1);
  const rows: number[][] = [];
  for (let k = 0; k <= g.n; k++) rows.push(Array.from(d.subarray(k * g.n, (k + 1) * g.n)));
  return rows;
}
