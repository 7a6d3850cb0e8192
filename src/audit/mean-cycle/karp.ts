/** Karp's minimum cycle mean of one strongly connected component (see ../cycles.ts for the method). */
import { GapwatchError } from "../../errors.js";
import { maxAbs, type LocalCycle, type Sub } from "./graph.js";

/**
 * Karp's table: `d[k * m + v]` = minimum weight of a walk with exactly k edges from `source` to v
 * (Infinity if none), for k = 0..rows-1, and the last edge of such a walk in `pred`.
 */
export function karpTableLocal(sub: Sub, source: number, rows: number): { d: Float64Array; pred: Int32Array } {
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
export function edgeSources(sub: Sub): Int32Array {
  const from = new Int32Array(sub.to.length);
  for (let u = 0; u < sub.m; u++) for (let e = sub.start[u]; e < sub.start[u + 1]; e++) from[e] = u;
  return from;
}

export function karpComponent(sub: Sub): LocalCycle | null {
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
