/**
 * Graph plumbing of the mean-cycle solvers (../cycles.ts): the public digraph forms, their validated
 * internal CSR, strongly connected components (Tarjan, explicit stack) and the per-component subgraph
 * with local vertex ids that Karp's and Howard's methods work on. Pure; no I/O.
 */
import { InputError } from "../../errors.js";
import { stronglyConnected } from "../../solve/engine/scc.js";

/** One edge of an edge-list graph. */
export interface GraphEdge<L = unknown> {
  from: number;
  to: number;
  weight: number;
  label?: L;
}

/** A weighted digraph as an edge list. Edge ids are positions in `edges`. */
export interface EdgeListDigraph<L = unknown> {
  n: number;
  edges: readonly GraphEdge<L>[];
}

/**
 * A weighted digraph in CSR form: the out-edges of vertex v are the ids `start[v] .. start[v + 1] - 1`,
 * edge e goes to `to[e]` with weight `weight[e]`. Edge ids are positions in these arrays.
 */
export interface CsrDigraph<L = unknown> {
  n: number;
  start: Int32Array;
  to: Int32Array;
  weight: Float64Array;
  /** Optional label of an edge id (kept as a function so large graphs carry no per-edge objects). */
  label?: (edge: number) => L;
}

export type Digraph<L = unknown> = EdgeListDigraph<L> | CsrDigraph<L>;

export interface Csr {
  n: number;
  start: Int32Array;
  to: Int32Array;
  /** The graph's own weights (not multiplied by `sign`: `subgraph` does that). */
  weight: Float64Array;
  /** The solvers see `sign * weight`. */
  sign: number;
  /** Original edge id of each CSR slot; null when slots are the edge ids (CSR input). */
  eid: Int32Array | null;
}

export function isCsr<L>(g: Digraph<L>): g is CsrDigraph<L> {
  return (g as CsrDigraph<L>).start !== undefined;
}

/** Validate and convert to internal CSR (CSR input is not copied); the solvers see weights times `sign`. */
export function toCsr<L>(g: Digraph<L>, sign: number): Csr {
  const n = g.n;
  if (!Number.isInteger(n) || n < 0) throw new InputError("input.graph", `vertex count must be a non-negative integer, got ${n}`, "graph.n");
  if (isCsr(g)) {
    const m = g.to.length;
    if (g.start.length !== n + 1 || g.start[0] !== 0 || g.start[n] !== m || g.weight.length !== m) {
      throw new InputError("input.graph", `CSR arrays are inconsistent: start has ${g.start.length} entries (expected ${n + 1}), to ${m}, weight ${g.weight.length}`, "graph.start");
    }
    for (let v = 0; v < n; v++) if (g.start[v + 1] < g.start[v]) throw new InputError("input.graph", `start[${v + 1}] < start[${v}]`, "graph.start");
    for (let e = 0; e < m; e++) {
      const t = g.to[e];
      if (!(t >= 0 && t < n)) throw new InputError("input.graph", `edge ${e} goes to vertex ${t}, outside 0..${n - 1}`, `graph.to[${e}]`);
      const w = g.weight[e];
      if (!Number.isFinite(w)) throw new InputError("input.graph", `edge ${e} has non-finite weight ${w}`, `graph.weight[${e}]`);
    }
    return { n, start: g.start, to: g.to, weight: g.weight, sign, eid: null };
  }
  const edges = g.edges;
  const m = edges.length;
  const start = new Int32Array(n + 1);
  for (let e = 0; e < m; e++) {
    const { from, to, weight } = edges[e];
    if (!(Number.isInteger(from) && from >= 0 && from < n) || !(Number.isInteger(to) && to >= 0 && to < n)) {
      throw new InputError("input.graph", `edge ${e} (${from} -> ${to}) has an endpoint outside 0..${n - 1}`, `graph.edges[${e}]`);
    }
    if (!Number.isFinite(weight)) throw new InputError("input.graph", `edge ${e} has non-finite weight ${weight}`, `graph.edges[${e}].weight`);
    start[from + 1]++;
  }
  for (let v = 0; v < n; v++) start[v + 1] += start[v];
  const fill = start.slice(0, n);
  const to = new Int32Array(m);
  const weight = new Float64Array(m);
  const eid = new Int32Array(m);
  for (let e = 0; e < m; e++) {
    const i = fill[edges[e].from]++;
    to[i] = edges[e].to;
    weight[i] = edges[e].weight;
    eid[i] = e;
  }
  return { n, start, to, weight, sign, eid };
}

export interface Components {
  /** Component id per vertex (ids in reverse topological order of the condensation). */
  comp: Int32Array;
  count: number;
  /** Vertices grouped by component: component c is `order[offset[c] .. offset[c + 1] - 1]`. */
  order: Int32Array;
  offset: Int32Array;
}

/**
 * Strongly connected components by Tarjan's algorithm with an explicit stack (no recursion): the
 * solver engine's (src/solve/engine/scc.ts), under this module's field names.
 */
export function stronglyConnectedComponents(n: number, start: Int32Array, to: Int32Array): Components {
  const c = stronglyConnected({ n, rowStart: start, col: to });
  return { comp: c.comp, count: c.count, order: c.members, offset: c.compStart };
}

/** Intra-component CSR with local vertex ids 0..m-1. `verts[local]` is the global id. */
export interface Sub {
  m: number;
  verts: Int32Array;
  start: Int32Array;
  to: Int32Array;
  weight: Float64Array;
  /** Internal CSR slot of each local edge (to map back to the original edge id). */
  slot: Int32Array;
}

/** The vertex whose out-edges hold edge `e` in a CSR graph with `start` (binary search). */
export function edgeSource(start: Int32Array, e: number): number {
  let lo = 0;
  let hi = start.length - 2;
  while (lo < hi) {
    const mid = (lo + hi + 1) >> 1;
    if (start[mid] <= e) lo = mid;
    else hi = mid - 1;
  }
  return lo;
}

export function subgraph(g: Csr, cc: Components, c: number, localIdx: Int32Array): Sub {
  const lo = cc.offset[c];
  const hi = cc.offset[c + 1];
  const m = hi - lo;
  const verts = cc.order.slice(lo, hi);
  for (let i = 0; i < m; i++) localIdx[verts[i]] = i;
  const start = new Int32Array(m + 1);
  for (let i = 0; i < m; i++) {
    const v = verts[i];
    let cnt = 0;
    for (let e = g.start[v]; e < g.start[v + 1]; e++) if (cc.comp[g.to[e]] === c) cnt++;
    start[i + 1] = start[i] + cnt;
  }
  const nE = start[m];
  const to = new Int32Array(nE);
  const weight = new Float64Array(nE);
  const slot = new Int32Array(nE);
  let j = 0;
  for (let i = 0; i < m; i++) {
    const v = verts[i];
    for (let e = g.start[v]; e < g.start[v + 1]; e++) {
      if (cc.comp[g.to[e]] !== c) continue;
      to[j] = localIdx[g.to[e]];
      weight[j] = g.sign * g.weight[e];
      slot[j] = e;
      j++;
    }
  }
  return { m, verts, start, to, weight, slot };
}

export interface LocalCycle {
  mean: number;
  /** Local edge ids in order. */
  edges: number[];
  certified: boolean;
}

/** Largest |a[i]| (0 for an empty array). */
export function maxAbs(a: Float64Array): number {
  let m = 0;
  for (let i = 0; i < a.length; i++) {
    const x = Math.abs(a[i]);
    if (x > m) m = x;
  }
  return m;
}
