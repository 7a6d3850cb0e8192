/**
 * weight-sensitivity: for each feature weight (others fixed), the interval of values over which the
 * designer-optimal policy stays intent-optimal, and how far the current weight is from its edge.
 *
 * "Intent-optimal" is decided exactly: the greedy policy of the designer reward at weight w picks, in
 * every state it reaches from the start distribution, an action whose intent action value equals the
 * optimal intent value (Q_I*(s, pi(s)) >= V_I*(s) - 1e-9 (1 + |V_I*(s)|)); for discounted models this is
 * equivalent to V_I^pi = V_I* on the start distribution. Greedy ties go to the lowest action index as in
 * src/solve/sweeps.ts (`greedyActions`), so at an exact breakpoint the answer follows that tie rule.
 *
 * Search: outward steps w0 +- scale * 2^(k - 3), k = 0 .. 9 (scale = |w0|, or the largest |weight| of
 * the variant when w0 = 0, or 1), then 10 bisection steps on the first step that changes the answer;
 * each probe is an exact value iteration (warm-started from the previous probe's values, tol 1e-8).
 * An edge beyond 64 * scale is reported as +-Infinity. Between probes the answer is assumed not to
 * flip twice (an interval narrower than a step could be missed; the step grid is reported).
 *
 * Severity: warning when the current weight keeps the policy intent-optimal but lies within 10% of
 * scale of an edge (a small re-weighting breaks it; our convention); info otherwise, including weights
 * at which the policy is not intent-optimal (then `fixAt` is the nearest weight that would make it so,
 * if any within the search range — the regret check carries the severity).
 */
import type { AuditContext } from "../context.js";
import { fmt } from "../context.js";
import type { Finding } from "../findings.js";
import { actionValues, expectedReward } from "../../solve/sweeps.js";
import { ownValue } from "../../util/own.js";

export interface WeightInterval {
  feature: string;
  weight: number;
  okAtCurrent: boolean;
  /** When okAtCurrent: the interval [lo, hi] containing the current weight. */
  lo: number | null;
  hi: number | null;
  /** When not okAtCurrent: the nearest weight at which the policy becomes intent-optimal, or null. */
  fixAt: number | null;
  /** Distance from the current weight to the nearest edge (ok) or to fixAt (not ok); Infinity if none. */
  distance: number;
  probes: number;
  /** The weights the search tried, lowest and highest: w0 -+ 64 * scale (see the module comment). */
  searched: [number, number];
}

const STEPS = 10;
const BISECT = 10;

export function weightIntervals(ctx: AuditContext, features?: string[]): WeightInterval[] {
  const { model, variant, gamma } = ctx;
  const nF = model.features.length;
  const nS = model.nStates;
  const nA = model.nActions;
  const nSA = nS * nA;
  const { saStart, next, prob, terminal } = model;
  const rBase = expectedReward(model, ctx.rd);
  const qI = actionValues(model, model.intent, ctx.solve.intentOptimal.values, gamma);
  const vI = ctx.solve.intentOptimal.values;
  const okAction = new Uint8Array(nSA);
  for (let s = 0; s < nS; s++) {
    if (terminal[s]) continue;
    const v = vI[s];
    for (let a = 0; a < nA; a++) okAction[s * nA + a] = qI[s * nA + a] >= v - 1e-9 * (1 + Math.abs(v)) ? 1 : 0;
  }
  const weights = Object.values(variant.weights).map(Math.abs).filter((x) => x > 0);
  const maxW = weights.length ? Math.max(...weights) : 1;
  const list = features ?? model.features.filter((f) => (ownValue(variant.weights, f) ?? 0) !== 0 || ctx.solve.regretNorm >= ctx.opts.regretWarning);
  const V = new Float64Array(nS);
  const r = new Float64Array(nSA);
  const fexp = new Float64Array(nSA);
  const pi = new Int32Array(nS);
  const seen = new Uint8Array(nS);
  const stack = new Int32Array(nS);
  const maxIters = gamma < 1 ? Math.max(10_000, Math.ceil(Math.log(1e-12) / Math.log(gamma)) * 4) : 100_000;
  const out: WeightInterval[] = [];
  for (const feature of list) {
    const f = model.features.indexOf(feature);
    if (f < 0) continue;
    for (let k = 0; k < nSA; k++) {
      let acc = 0;
      for (let o = saStart[k]; o < saStart[k + 1]; o++) acc += prob[o] * model.featureValues[o * nF + f];
      fexp[k] = acc;
    }
    const w0 = ownValue(variant.weights, feature) ?? 0;
    const scale = w0 !== 0 ? Math.abs(w0) : maxW;
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
      // Intent-optimal on every state the greedy policy reaches?
      seen.fill(0);
      let sp = 0;
      for (let s = 0; s < nS; s++) if (model.start[s] > 0) ((seen[s] = 1), (stack[sp++] = s));
      while (sp > 0) {
        const s = stack[--sp];
        if (terminal[s]) continue;
        const k = s * nA + pi[s];
        if (!okAction[k]) return false;
        for (let o = saStart[k]; o < saStart[k + 1]; o++) {
          const t = next[o];
          if (prob[o] > 0 && !seen[t]) ((seen[t] = 1), (stack[sp++] = t));
        }
      }
      return true;
    };
    const ok0 = okAt(w0);
    // Find, per direction, the first step whose answer differs from ok0, then bisect.
    const edge = (dir: number): number => {
      let prev = 0;
      for (let k = 0; k < STEPS; k++) {
        const d = scale * 2 ** (k - 3);
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
    const down = edge(-1);
    const up = edge(1);
    if (ok0) {
      out.push({ feature, weight: w0, okAtCurrent: true, lo: down, hi: up, fixAt: null, distance: Math.min(w0 - down, up - w0), probes, searched: [w0 - 64 * scale, w0 + 64 * scale] });
    } else {
      const cands = [down, up].filter((x) => Number.isFinite(x));
      const fixAt = cands.length ? cands.reduce((a, b) => (Math.abs(a - w0) <= Math.abs(b - w0) ? a : b)) : null;
      out.push({ feature, weight: w0, okAtCurrent: false, lo: null, hi: null, fixAt, distance: fixAt === null ? Infinity : Math.abs(fixAt - w0), probes, searched: [w0 - 64 * scale, w0 + 64 * scale] });
    }
  }
  return out;
}

export function sensitivityCheck(ctx: AuditContext): Finding[] {
  const rows = weightIntervals(ctx, ctx.opts.sensitivityFeatures);
  const findings: Finding[] = [];
  for (const w of rows) {
    const scale = w.weight !== 0 ? Math.abs(w.weight) : 1;
    if (w.okAtCurrent) {
      const close = w.distance < 0.1 * scale;
      const span = `[${fmt(w.lo!)}, ${fmt(w.hi!)}]`;
      findings.push({
        check: "weight-sensitivity",
        severity: close ? "warning" : "info",
        message: close
          ? `weight of ${w.feature} (${w.weight}) is ${fmt(w.distance)} from the edge of ${span}, the range over which the designer-optimal policy stays intent-optimal`
          : `weight of ${w.feature} (${w.weight}) keeps the designer-optimal policy intent-optimal over ${span} (others fixed)`,
        evidence: { ...w },
      });
    } else {
      findings.push({
        check: "weight-sensitivity",
        severity: "info",
        message:
          w.fixAt === null
            ? `changing the ${w.feature} weight alone (now ${w.weight}; every value from ${fmt(w.searched[0])} to ${fmt(w.searched[1])} was tried, the other weights kept as they are) never makes the designer-optimal policy intent-optimal`
            : `setting the ${w.feature} weight to ${fmt(w.fixAt)} (now ${w.weight}) would make the designer-optimal policy intent-optimal`,
        evidence: { ...w },
      });
    }
  }
  return findings;
}
