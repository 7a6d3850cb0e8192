/**
 * The earlier weight-sensitivity search, kept to check the parametric method of sensitivity.ts
 * against (tests/audit/sensitivity-parametric.test.ts) and used by it when gamma = 1 (where the
 * parametric method's policy evaluations may have no finite values). Same rows, same meaning.
 *
 * Search: outward steps w0 +- scale * 2^(k - 3), k = 0 .. 9 (scale: sensitivity-common.ts
 * `weightScale`), then 10 bisection steps on the first step that changes the answer; each probe is an
 * exact value iteration (warm-started from the previous probe's values, tol 1e-8) and its greedy
 * policy (exact comparison, lowest index first). An edge beyond 64 * scale is reported as +-Infinity.
 * Between probes the answer is assumed not to flip twice: an interval narrower than a step can be
 * missed (the parametric method finds it).
 */
import type { AuditContext } from "../context.js";
import { expectedReward } from "../../solve/sweeps.js";
import { currentWeight, featureColumn, intentOkActions, intervalRow, reachesOnlyOk, SEARCH_SPAN, sweptFeatures, walkBuffers, type WeightInterval, weightScale } from "./sensitivity-common.js";

const STEPS = 10;
const BISECT = 10;

export function weightIntervalsBisection(ctx: AuditContext, features?: string[]): WeightInterval[] {
  const { model, gamma } = ctx;
  const nS = model.nStates;
  const nA = model.nActions;
  const nSA = nS * nA;
  const { saStart, next, prob, terminal } = model;
  const rBase = expectedReward(model, ctx.rd);
  const okAction = intentOkActions(ctx);
  const { list, maxW } = sweptFeatures(ctx, features);
  const V = new Float64Array(nS);
  const r = new Float64Array(nSA);
  const pi = new Int32Array(nS);
  const buf = walkBuffers(nS);
  const maxIters = gamma < 1 ? Math.max(10_000, Math.ceil(Math.log(1e-12) / Math.log(gamma)) * 4) : 100_000;
  const out: WeightInterval[] = [];
  for (const feature of list) {
    const f = model.features.indexOf(feature);
    if (f < 0) continue;
    const fexp = expectedReward(model, featureColumn(model, f));
    const w0 = currentWeight(ctx, feature);
    const scale = weightScale(w0, maxW);
    let probes = 0;
    V.set(ctx.solve.designerOptimal.values);
    const okAt = (w: number): boolean => {
      probes++;
      const dw = w - w0;
      for (let k = 0; k < nSA; k++) r[k] = rBase[k] + dw * fexp[k];
      // Gauss-Seidel value iteration from the previous probe's values.
      for (let it = 0; it < maxIters; it++) {
        let delta = 0;
        for (let s = 0; s < nS; s++) {
          if (terminal[s]) continue;
          let best = -Infinity;
          for (let a = 0; a < nA; a++) {
            const k = s * nA + a;
            let ev = 0;
            for (let o = saStart[k]; o < saStart[k + 1]; o++) ev += prob[o] * V[next[o]];
            const q = r[k] + gamma * ev;
            if (q > best) best = q;
          }
          const d = Math.abs(best - V[s]);
          if (d > delta) delta = d;
          V[s] = best;
        }
        if (delta < 1e-8) break;
      }
      for (let s = 0; s < nS; s++) {
        if (terminal[s]) {
          pi[s] = -1;
          continue;
        }
        let ba = 0;
        let bq = -Infinity;
        for (let a = 0; a < nA; a++) {
          const k = s * nA + a;
          let ev = 0;
          for (let o = saStart[k]; o < saStart[k + 1]; o++) ev += prob[o] * V[next[o]];
          const q = r[k] + gamma * ev;
          if (q > bq) ((bq = q), (ba = a));
        }
        pi[s] = ba;
      }
      return reachesOnlyOk(model, pi, okAction, buf);
    };
    const ok0 = okAt(w0);
    // Find, per direction, the first step whose answer differs from ok0, then bisect.
    const edge = (dir: number): number => {
      let prev = 0;
      for (let k = 0; k < STEPS; k++) {
        const d = (scale * SEARCH_SPAN) * 2 ** (k - STEPS + 1);
        if (okAt(w0 + dir * d) !== ok0) {
          let lo = prev; // answer == ok0
          let hi = d; // answer != ok0
          for (let i = 0; i < BISECT; i++) {
            const mid = (lo + hi) / 2;
            if (okAt(w0 + dir * mid) === ok0) lo = mid;
            else hi = mid;
          }
          // Edge of the ok set: last ok point when ok0, first ok point otherwise.
          return w0 + dir * (ok0 ? lo : hi);
        }
        prev = d;
      }
      return dir * Infinity;
    };
    out.push(intervalRow(feature, w0, ok0, edge(-1), edge(1), probes, SEARCH_SPAN * scale));
  }
  return out;
}
