/**
 * Strongly connected components of a directed graph in CSR form, without recursion (a model can have
 * a million states, far beyond the JavaScript call stack).
 *
 * Method: Tarjan's algorithm (Tarjan 1972, "Depth-first search and linear graph algorithms", SIAM J.
 * Comput. 1(2)), with the depth-first search's call stack kept in typed arrays. Tarjan's algorithm
 * completes a component only after every component reachable from it, so the components come out in
 * reverse topological order of the condensation: the order in which values can be solved, sinks
 * first (Tarjan 1972; Cormen et al., "Introduction to Algorithms", 3rd ed., section 22.5; from memory).
 * O(nodes + edges) time; a few Int32Arrays of length `nodes` of memory.
 */

/** A graph over nodes 0 .. n - 1: the successors of `i` are `col[rowStart[i] .. rowStart[i + 1] - 1]`. */
export interface CsrGraph {
  readonly n: number;
  readonly rowStart: Int32Array;
  readonly col: Int32Array;
}

export interface Components {
  /** Number of components. */
  readonly count: number;
  /** Component of each node; components are numbered in reverse topological order (sinks first). */
  readonly comp: Int32Array;
  /** Nodes grouped by component: component c is `members[compStart[c] .. compStart[c + 1] - 1]`. */
  readonly members: Int32Array;
  readonly compStart: Int32Array;
}

export function stronglyConnected(g: CsrGraph): Components {
  const { n, rowStart, col } = g;
  const index = new Int32Array(n).fill(-1);
  const low = new Int32Array(n);
  const onStack = new Uint8Array(n);
  const stack = new Int32Array(n);
  const callNode = new Int32Array(n);
  const callEdge = new Int32Array(n);
  const comp = new Int32Array(n);
  const members = new Int32Array(n);
  const compStartTmp = new Int32Array(n + 1);
  let sp = 0;
  let counter = 0;
  let count = 0;
  let mp = 0;
  for (let root = 0; root < n; root++) {
    if (index[root] !== -1) continue;
    let csp = 0;
    index[root] = low[root] = counter++;
    stack[sp++] = root;
    onStack[root] = 1;
    callNode[0] = root;
    callEdge[0] = rowStart[root];
    csp = 1;
    while (csp > 0) {
      const v = callNode[csp - 1];
      const e = callEdge[csp - 1];
      if (e < rowStart[v + 1]) {
        callEdge[csp - 1] = e + 1;
        const w = col[e];
        if (index[w] === -1) {
          index[w] = low[w] = counter++;
          stack[sp++] = w;
          onStack[w] = 1;
          callNode[csp] = w;
          callEdge[csp] = rowStart[w];
          csp++;
        } else if (onStack[w] === 1 && index[w] < low[v]) low[v] = index[w];
        continue;
      }
      // All successors of v done: v roots a component if nothing below reached higher.
      if (low[v] === index[v]) {
        let w: number;
        do {
          w = stack[--sp];
          onStack[w] = 0;
          comp[w] = count;
          members[mp++] = w;
        } while (w !== v);
        compStartTmp[++count] = mp;
      }
      csp--;
      if (csp > 0) {
        const u = callNode[csp - 1];
        if (low[v] < low[u]) low[u] = low[v];
      }
    }
  }
  return { count, comp, members, compStart: compStartTmp.slice(0, count + 1) };
}

/** Predecessor lists of a CSR graph (the transpose), O(nodes + edges). */
export function transpose(g: CsrGraph): CsrGraph {
  const { n, rowStart, col } = g;
  const inStart = new Int32Array(n + 1);
  for (let e = 0; e < col.length; e++) inStart[col[e] + 1]++;
  for (let i = 0; i < n; i++) inStart[i + 1] += inStart[i];
  const fill = inStart.slice(0, n);
  const pred = new Int32Array(col.length);
  for (let i = 0; i < n; i++) for (let e = rowStart[i]; e < rowStart[i + 1]; e++) pred[fill[col[e]]++] = i;
  return { n, rowStart: inStart, col: pred };
}
