/**
 * Minimum and maximum mean cycles of a weighted digraph, and the "deterministic-choice graph" of a
 * finite model (the loops an optimizer can ride forever on purpose).
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
import { GapwatchError, InputError } from "../errors.js";
import type { FiniteModel } from "../model/types.js";
import { stronglyConnected } from "../solve/engine/scc.js";

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

export type MeanCycleMethod = "karp" | "howard";

export interface MeanCycleOptions {
  /** "auto" (default): Karp up to `karpMaxVertices` vertices per component, Howard above. */
  method?: "auto" | MeanCycleMethod;
  /** Largest component solved with Karp's O(m^2)-memory table under "auto". Default 2000. */
  karpMaxVertices?: number;
  /** Cap on Howard's policy-improvement rounds (per component). Default 10000. */
  maxHowardIters?: number;
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

interface Csr {
  n: number;
  start: Int32Array;
  to: Int32Array;
  weight: Float64Array;
  /** Original edge id of each CSR slot. */
  eid: Int32Array;
}

function isCsr<L>(g: Digraph<L>): g is CsrDigraph<L> {
  return (g as CsrDigraph<L>).start !== undefined;
}

/** Validate and convert to internal CSR, multiplying weights by `sign`. */
function toCsr<L>(g: Digraph<L>, sign: number): Csr {
  const n = g.n;
  if (!Number.isInteger(n) || n < 0) throw new InputError("input.graph", `vertex count must be a non-negative integer, got ${n}`, "graph.n");
  if (isCsr(g)) {
    const m = g.to.length;
    if (g.start.length !== n + 1 || g.start[0] !== 0 || g.start[n] !== m || g.weight.length !== m) {
      throw new InputError("input.graph", `CSR arrays are inconsistent: start has ${g.start.length} entries (expected ${n + 1}), to ${m}, weight ${g.weight.length}`, "graph.start");
    }
    const weight = new Float64Array(m);
    for (let v = 0; v < n; v++) if (g.start[v + 1] < g.start[v]) throw new InputError("input.graph", `start[${v + 1}] < start[${v}]`, "graph.start");
    for (let e = 0; e < m; e++) {
      const t = g.to[e];
      if (!(t >= 0 && t < n)) throw new InputError("input.graph", `edge ${e} goes to vertex ${t}, outside 0..${n - 1}`, `graph.to[${e}]`);
      const w = g.weight[e];
      if (!Number.isFinite(w)) throw new InputError("input.graph", `edge ${e} has non-finite weight ${w}`, `graph.weight[${e}]`);
      weight[e] = sign * w;
    }
    const eid = new Int32Array(m);
    for (let e = 0; e < m; e++) eid[e] = e;
    return { n, start: g.start, to: g.to, weight, eid };
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
    weight[i] = sign * edges[e].weight;
    eid[i] = e;
  }
  return { n, start, to, weight, eid };
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
interface Sub {
  m: number;
  verts: Int32Array;
  start: Int32Array;
  to: Int32Array;
  weight: Float64Array;
  /** Internal CSR slot of each local edge (to map back to the original edge id). */
  slot: Int32Array;
}

function subgraph(g: Csr, cc: Components, c: number, localIdx: Int32Array): Sub {
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
      weight[j] = g.weight[e];
      slot[j] = e;
      j++;
    }
  }
  return { m, verts, start, to, weight, slot };
}

interface LocalCycle {
  mean: number;
  /** Local edge ids in order. */
  edges: number[];
  certified: boolean;
}

/**
 * Karp's table: `d[k * m + v]` = minimum weight of a walk with exactly k edges from `source` to v
 * (Infinity if none), for k = 0..rows-1, and the last edge of such a walk in `pred`.
 */
function karpTableLocal(sub: Sub, source: number, rows: number): { d: Float64Array; pred: Int32Array } {
  const { m, start, to, weight } = sub;
  const d = new Float64Array(rows * m).fill(Infinity);
  const pred = new Int32Array(rows * m).fill(-1);
  d[source] = 0;
  for (let k = 1; k < rows; k++) {
    const prev = (k - 1) * m;
    const cur = k * m;
    for (let u = 0; u < m; u++) {
      const du = d[prev + u];
      if (du === Infinity) continue;
      for (let e = start[u]; e < start[u + 1]; e++) {
        const v = to[e];
        const cand = du + weight[e];
        if (cand < d[cur + v]) {
          d[cur + v] = cand;
          pred[cur + v] = e;
        }
      }
    }
  }
  return { d, pred };
}

/** Source vertex (local) of each local edge. */
function edgeSources(sub: Sub): Int32Array {
  const from = new Int32Array(sub.to.length);
  for (let u = 0; u < sub.m; u++) for (let e = sub.start[u]; e < sub.start[u + 1]; e++) from[e] = u;
  return from;
}

function karpComponent(sub: Sub): LocalCycle | null {
  const m = sub.m;
  if (sub.to.length === 0) return null;
  const { d, pred } = karpTableLocal(sub, 0, m + 1);
  const last = m * m;
  let best = Infinity;
  let arg = -1;
  for (let v = 0; v < m; v++) {
    const dn = d[last + v];
    if (dn === Infinity) continue;
    let worst = -Infinity;
    for (let k = 0; k < m; k++) {
      const dk = d[k * m + v];
      if (dk === Infinity) continue;
      const r = (dn - dk) / (m - k);
      if (r > worst) worst = r;
    }
    if (worst < best) {
      best = worst;
      arg = v;
    }
  }
  if (arg < 0) return null;
  // Walk back the m-edge walk to arg until a vertex repeats.
  const from = edgeSources(sub);
  const seenAt = new Int32Array(m).fill(-1);
  const walkEdge = new Int32Array(m + 1);
  let v = arg;
  let k = m;
  seenAt[v] = k;
  for (;;) {
    const e = pred[k * m + v];
    if (e < 0) throw new GapwatchError("audit.karpWalk", "Karp walk-back reached a vertex without a predecessor");
    walkEdge[k] = e;
    const u = from[e];
    k--;
    if (seenAt[u] >= 0) {
      // Closed sub-walk: from u at level k up to u at level seenAt[u].
      const edges: number[] = [];
      for (let j = k + 1; j <= seenAt[u]; j++) edges.push(walkEdge[j]);
      let sum = 0;
      for (const x of edges) sum += sub.weight[x];
      const mean = sum / edges.length;
      if (Math.abs(mean - best) > 1e-9 * (1 + Math.abs(best) + maxAbs(sub.weight))) {
        throw new GapwatchError("audit.karpCycle", `extracted cycle mean ${mean} differs from Karp's value ${best}`);
      }
      return { mean: best, edges, certified: true };
    }
    seenAt[u] = k;
    v = u;
  }
}

function maxAbs(a: Float64Array): number {
  let m = 0;
  for (let i = 0; i < a.length; i++) {
    const x = Math.abs(a[i]);
    if (x > m) m = x;
  }
  return m;
}

/** Howard's policy iteration for the minimum cycle mean of one strongly connected component. */
function howardComponent(sub: Sub, maxIters: number): LocalCycle | null {
  const { m, start, to, weight } = sub;
  if (to.length === 0) return null;
  const eps = 1e-12 * (1 + maxAbs(weight));
  const pol = new Int32Array(m);
  for (let u = 0; u < m; u++) {
    let b = start[u];
    for (let e = start[u] + 1; e < start[u + 1]; e++) if (weight[e] < weight[b]) b = e;
    pol[u] = b;
  }
  const eta = new Float64Array(m);
  const x = new Float64Array(m);
  const stamp = new Int32Array(m);
  const done = new Uint8Array(m);
  const pos = new Int32Array(m);
  const stack = new Int32Array(m);
  let iters = 0;
  for (;;) {
    // Evaluate the policy graph: every vertex reaches exactly one cycle.
    stamp.fill(-1);
    done.fill(0);
    for (let root = 0; root < m; root++) {
      if (done[root]) continue;
      let sp = 0;
      let u = root;
      while (!done[u] && stamp[u] !== root) {
        stamp[u] = root;
        pos[u] = sp;
        stack[sp++] = u;
        u = to[pol[u]];
      }
      let top = sp;
      if (!done[u]) {
        // New cycle stack[pos[u]] .. stack[sp - 1].
        const c0 = pos[u];
        let sum = 0;
        for (let i = c0; i < sp; i++) sum += weight[pol[stack[i]]];
        const L = sp - c0;
        const mu = sum / L;
        // Handle: the smallest vertex of the cycle, so an unchanged cycle keeps the same potentials
        // between rounds (what the termination argument of Howard's method relies on).
        let ih = 0;
        for (let i = 1; i < L; i++) if (stack[c0 + i] < stack[c0 + ih]) ih = i;
        const h = stack[c0 + ih];
        x[h] = 0;
        eta[h] = mu;
        done[h] = 1;
        for (let j = 1; j < L; j++) {
          const w = stack[c0 + ((ih - j + L) % L)];
          eta[w] = mu;
          x[w] = weight[pol[w]] - mu + x[to[pol[w]]];
          done[w] = 1;
        }
        top = c0;
      }
      for (let i = top - 1; i >= 0; i--) {
        const w = stack[i];
        const t = to[pol[w]];
        eta[w] = eta[t];
        x[w] = weight[pol[w]] - eta[t] + x[t];
        done[w] = 1;
      }
    }
    if (iters++ >= maxIters) break;
    // Improve: first towards smaller cycle means, then towards smaller potentials.
    let changed = false;
    for (let u = 0; u < m; u++) {
      let b = -1;
      let be = eta[u] - eps;
      for (let e = start[u]; e < start[u + 1]; e++) {
        if (eta[to[e]] < be) {
          be = eta[to[e]];
          b = e;
        }
      }
      if (b >= 0) {
        pol[u] = b;
        changed = true;
      }
    }
    if (!changed) {
      for (let u = 0; u < m; u++) {
        let b = -1;
        let bv = x[u] - eps * (1 + Math.abs(x[u]));
        for (let e = start[u]; e < start[u + 1]; e++) {
          const t = to[e];
          if (Math.abs(eta[t] - eta[u]) > eps) continue;
          const val = weight[e] - eta[u] + x[t];
          if (val < bv) {
            bv = val;
            b = e;
          }
        }
        if (b >= 0) {
          pol[u] = b;
          changed = true;
        }
      }
    }
    if (!changed) break;
  }
  // The cycle of the vertex with the smallest eta.
  let arg = 0;
  for (let u = 1; u < m; u++) if (eta[u] < eta[arg]) arg = u;
  const onPath = new Int32Array(m).fill(-1);
  let u = arg;
  let step = 0;
  while (onPath[u] < 0) {
    onPath[u] = step++;
    u = to[pol[u]];
  }
  const edges: number[] = [];
  const c = u;
  do {
    edges.push(pol[u]);
    u = to[pol[u]];
  } while (u !== c);
  let sum = 0;
  for (const e of edges) sum += weight[e];
  const mean = sum / edges.length;
  let certified = true;
  const tol = 1e-9 * (1 + maxAbs(weight));
  for (let v = 0; v < m && certified; v++) {
    for (let e = start[v]; e < start[v + 1]; e++) {
      if (weight[e] - mean + x[to[e]] < x[v] - tol * (1 + Math.abs(x[v]))) {
        certified = false;
        break;
      }
    }
  }
  return { mean, edges, certified };
}

function solveMinMean<L>(graph: Digraph<L>, sign: number, opts: MeanCycleOptions): MeanCycle<L> | null {
  const g = toCsr(graph, sign);
  const cc = stronglyConnectedComponents(g.n, g.start, g.to);
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
  const edges = cyc.edges.map((e) => g.eid[sub.slot[e]]);
  const slots = cyc.edges.map((e) => sub.slot[e]);
  const vertices = cyc.edges.map((e) => sub.verts[localFrom(sub, e)]);
  const weights = slots.map((s) => sign * g.weight[s]);
  const labels = edges.map((e) => labelOf(graph, e));
  return { mean: sign * cyc.mean, vertices, edges, weights, labels, method: best.method, certified: cyc.certified };
}

function localFrom(sub: Sub, e: number): number {
  // Binary search the CSR start array for the source of local edge e.
  let lo = 0;
  let hi = sub.m - 1;
  while (lo < hi) {
    const mid = (lo + hi + 1) >> 1;
    if (sub.start[mid] <= e) lo = mid;
    else hi = mid - 1;
  }
  return lo;
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
  const sub: Sub = { m: g.n, verts, start: g.start, to: g.to, weight: g.weight, slot: g.eid };
  const { d } = karpTableLocal(sub, source, g.n + 1);
  const rows: number[][] = [];
  for (let k = 0; k <= g.n; k++) rows.push(Array.from(d.subarray(k * g.n, (k + 1) * g.n)));
  return rows;
}

/** Label of a choice-graph edge: the (state, action) pair and which of its outcomes the edge is. */
export interface ChoiceLabel {
  state: number;
  action: number;
  /** Outcome index into the model's per-outcome arrays. */
  outcome: number;
}

export interface ChoiceGraph extends CsrDigraph<ChoiceLabel> {
  /** Action index per edge. */
  action: Int32Array;
  /** Outcome index per edge. */
  outcome: Int32Array;
  label: (edge: number) => ChoiceLabel;
}

export interface ChoiceGraphOptions {
  /**
   * Keep an outcome as an edge when its probability is at least this. Default 1: only certain
   * outcomes, so every cycle of the graph can be ridden forever by choice. A value below 1 adds
   * "optimistic" edges: a cycle that uses one is reachable with positive probability per lap but not
   * guaranteed (the optimizer would need luck on that edge every lap). Compared with a 1e-12 slack.
   */
  minProb?: number;
}

/**
 * The deterministic-choice graph of a model: an edge s -> s' for every outcome of every (s, a) of a
 * non-terminal s whose probability passes `minProb`, weighted with `rewardPerOutcome[o]` (normally the
 * designer reward of a variant), labelled with the action and outcome. Terminal states have no edges.
 */
export function modelChoiceGraph(model: FiniteModel, rewardPerOutcome: Float64Array, opts: ChoiceGraphOptions = {}): ChoiceGraph {
  const minProb = opts.minProb ?? 1;
  if (!(minProb > 0 && minProb <= 1)) throw new InputError("input.minProb", `minProb must be in (0, 1], got ${minProb}`, "choice graph options");
  const nO = model.next.length;
  if (rewardPerOutcome.length !== nO) {
    throw new InputError("input.reward", `reward has ${rewardPerOutcome.length} entries, expected one per outcome (${nO})`, "choice graph reward");
  }
  const thr = minProb - 1e-12;
  const { nStates: nS, nActions: nA, saStart, prob, next, terminal } = model;
  const start = new Int32Array(nS + 1);
  for (let s = 0; s < nS; s++) {
    let cnt = 0;
    if (!terminal[s]) for (let o = saStart[s * nA]; o < saStart[(s + 1) * nA]; o++) if (prob[o] >= thr) cnt++;
    start[s + 1] = start[s] + cnt;
  }
  const m = start[nS];
  const to = new Int32Array(m);
  const weight = new Float64Array(m);
  const action = new Int32Array(m);
  const outcome = new Int32Array(m);
  const stateOf = new Int32Array(m);
  let j = 0;
  for (let s = 0; s < nS; s++) {
    if (terminal[s]) continue;
    for (let a = 0; a < nA; a++) {
      const k = s * nA + a;
      for (let o = saStart[k]; o < saStart[k + 1]; o++) {
        if (prob[o] < thr) continue;
        to[j] = next[o];
        weight[j] = rewardPerOutcome[o];
        action[j] = a;
        outcome[j] = o;
        stateOf[j] = s;
        j++;
      }
    }
  }
  return {
    n: nS,
    start,
    to,
    weight,
    action,
    outcome,
    label: (e: number) => ({ state: stateOf[e], action: action[e], outcome: outcome[e] }),
  };
}
