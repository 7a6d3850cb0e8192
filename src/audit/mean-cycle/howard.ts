/** Howard's policy iteration for the minimum cycle mean of one component (see ../cycles.ts for the method). */
import { maxAbs, type LocalCycle, type Sub } from "./graph.js";
import { walkBuffers, walkFunctionalGraph } from "./functional-walk.js";

/** Howard's policy iteration for the minimum cycle mean of one strongly connected component. */
export function howardComponent(sub: Sub, maxIters: number): LocalCycle | null {
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
  const done = new Uint8Array(m);
  const buf = walkBuffers(m);
  let iters = 0;
  for (;;) {
    // Evaluate the policy graph: every vertex reaches exactly one cycle.
    done.fill(0);
    walkFunctionalGraph(
      m,
      (u) => to[pol[u]],
      done,
      buf,
      (stack, c0, sp) => {
        // A new cycle stack[c0] .. stack[sp - 1].
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
      },
      (w) => {
        const t = to[pol[w]];
        eta[w] = eta[t];
        x[w] = weight[pol[w]] - eta[t] + x[t];
      },
    );
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
