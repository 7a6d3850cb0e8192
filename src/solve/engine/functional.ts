/**
 * Policy evaluation when the policy's chain is a functional graph: a deterministic policy whose
 * chosen action in every live state has a single outcome (common in gridworlds and in the optimal
 * policies of deterministic models). Then v(s) = r(s) + gamma v(next(s)) along one path per state,
 * which ends in a terminal state (value 0) or enters a cycle c_0 .. c_{L-1}, whose values are closed
 * form:
 *     v(c_0) = (sum_{k < L} gamma^k r(c_k)) / (1 - gamma^L),
 * and every other state's value follows backwards along its path. Each state is visited once (an
 * explicit stack, no recursion), for all rewards together; exact up to rounding (no iteration, no
 * stopping rule). Returns null where this does not apply (some chosen action with several outcomes, or
 * a cycle at gamma >= 1): callers evaluate with the component-wise engine instead.
 * Pure; no I/O.
 */
import type { FiniteModel } from "../../model/types.js";

/**
 * Values per state (0 on terminal states) of the deterministic policy `actions` (an action per state;
 * ignored on terminal states) for each reward per outcome, or null (see the file comment).
 */
export function evaluateFunctional(model: FiniteModel, rewards: Float64Array[], actions: Int32Array, gamma: number): Float64Array[] | null {
  const { nStates: nS, nActions: nA, saStart, next, prob, terminal } = model;
  // Successor and the outcome taken, per live state.
  const succ = new Int32Array(nS).fill(-1);
  const via = new Int32Array(nS);
  for (let s = 0; s < nS; s++) {
    if (terminal[s]) continue;
    const a = actions[s];
    if (!(a >= 0 && a < nA)) return null;
    const k = s * nA + a;
    let found = -1;
    for (let o = saStart[k]; o < saStart[k + 1]; o++) {
      if (prob[o] === 0) continue;
      if (found >= 0) return null;
      found = o;
    }
    if (found < 0 || prob[found] !== 1) return null;
    succ[s] = next[found];
    via[s] = found;
  }
  const nR = rewards.length;
  const values = rewards.map(() => new Float64Array(nS));
  // 0 unvisited, 1 on the current path, 2 done.
  const status = new Uint8Array(nS);
  const path = new Int32Array(nS);
  const sums = new Float64Array(nR);
  for (let s0 = 0; s0 < nS; s0++) {
    if (terminal[s0] || status[s0] !== 0) continue;
    let len = 0;
    let s = s0;
    while (!terminal[s] && status[s] === 0) {
      status[s] = 1;
      path[len++] = s;
      s = succ[s];
    }
    let end = len;
    if (!terminal[s] && status[s] === 1) {
      // A cycle: from s (on the path) to the path's end.
      if (!(gamma < 1)) return null;
      let i0 = end - 1;
      while (path[i0] !== s) i0--;
      sums.fill(0);
      let disc = 1;
      for (let i = i0; i < end; i++) {
        const o = via[path[i]];
        for (let j = 0; j < nR; j++) sums[j] += disc * rewards[j][o];
        disc *= gamma;
      }
      for (let j = 0; j < nR; j++) values[j][s] = sums[j] / (1 - disc);
      for (let i = end - 1; i > i0; i--) {
        const u = path[i];
        const o = via[u];
        for (let j = 0; j < nR; j++) values[j][u] = rewards[j][o] + gamma * values[j][succ[u]];
      }
      for (let i = i0; i < end; i++) status[path[i]] = 2;
      end = i0;
    }
    // The rest of the path, backwards from where it ended (a terminal state, a done state or the cycle).
    for (let i = end - 1; i >= 0; i--) {
      const u = path[i];
      const o = via[u];
      const t = succ[u];
      for (let j = 0; j < nR; j++) values[j][u] = rewards[j][o] + gamma * (terminal[t] ? 0 : values[j][t]);
      status[u] = 2;
    }
  }
  return values;
}
