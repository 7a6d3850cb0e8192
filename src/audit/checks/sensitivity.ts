/**
 * weight-sensitivity: for each feature weight (others fixed), the interval of values over which the
 * designer-optimal policy stays intent-optimal, and how far the current weight is from its edge.
 * Intent-optimal: sensitivity-common.ts (exact, on the states the policy reaches).
 *
 * Method: parametric analysis of the designer MDP in one weight (the parametric / sensitivity analysis
 * of a linear program, applied to the MDP's LP through policy iteration: Puterman 1994, sections 6.9
 * and 10.2 on the LP and on sensitive optimality; any parametric-programming text for the
 * breakpoint walk; from memory). With w = w0 + t the designer reward is r(t) = r0 + t phi_f per
 * outcome (shaping does not depend on w), so for a fixed policy pi
 *
 *     V^pi(t) = V0 + t Vf,   Q^pi(s, a; t) = q0(s, a) + t qf(s, a),
 *
 * with V0, Vf two exact policy evaluations of pi (src/solve/engine, accuracy 1e-12) on r0 and phi_f.
 * pi is optimal at t iff Q^pi(s, a; t) <= V^pi(s; t) for all (s, a) (Bellman optimality), i.e. a set of
 * linear inequalities (q0 - v0) + t (qf - vf) <= 0; they hold on an interval of t around the current
 * point, and its end in direction dir is the nearest root t = -(q0 - v0) / (qf - vf) over the pairs
 * whose difference grows in that direction. At that edge the policy optimal just beyond (t_e + 0) is
 * found by policy iteration started from pi whose improvement step compares actions
 * lexicographically: first Q(t_e), then dir * qf (the slope), then the lower action index (a
 * 1-sensitive comparison; it converges to the policy that is optimal on (t_e, t_e + delta) for some
 * delta > 0). The walk goes from policy to policy until the intent answer differs from the one at w0,
 * or the edge is beyond SEARCH_SPAN * scale (reported as +-Infinity). Each step costs two or three
 * evaluations (of two rewards each), so the cost is the number of breakpoints crossed, not a grid.
 *
 * Which states: the inequalities are imposed, and policies improved, on the non-terminal states
 * reachable from the start distribution under any actions (ctx.reachable). That set is closed under
 * every action's outcomes, so optimality on it makes V^pi = V* on it, and the greedy choice in any
 * state the policy visits depends only on V* there; the intent test looks only at states the policy
 * reaches from the start, a subset. States outside the set keep the solver's actions and never matter.
 *
 * Tie rule (as src/solve/sweeps.ts greedyActions: the lowest action index among the maxima). Two
 * actions tie when their values differ by at most 1e-9 (1 + |V(s)|) (slopes: 1e-9 (1 + |Vf(s)|)). At
 * w0 the policy is the greedy one with that rule. Between breakpoints the policy is unique up to
 * exact ties (identical lines, where the lower index wins everywhere). At a breakpoint itself the
 * rule decides which side's policy holds; the reported edge is the breakpoint either way, and a
 * policy optimal at a single weight only (a lower-index action that ties at exactly t_e and loses on
 * both sides) is not reported as an interval. The bisection method decided ties at w0 by rounding of
 * its value iteration; on exact ties (symmetric routes) the two may pick different policies.
 *
 * gamma = 1: policies can be improper (values without a finite fixed point), so the earlier
 * step-and-bisect search (sensitivity-bisection.ts) is used instead.
 *
 * Severity: warning when the current weight keeps the policy intent-optimal but lies within 10% of
 * scale of an edge (a small re-weighting breaks it; our convention); info otherwise, including weights
 * at which the policy is not intent-optimal (then `fixAt` is the nearest weight that would make it so,
 * if any within the search range — the regret check carries the severity).
 */
import type { AuditContext } from "../context.js";
import { fmt } from "../context.js";
import type { Finding } from "../findings.js";
import { evaluatePolicyEngineMany } from "../../solve/engine/index.js";
import { deterministicPolicy } from "../../solve/policy.js";
import { expectedReward } from "../../solve/sweeps.js";
import { weightIntervalsBisection } from "./sensitivity-bisection.js";
import { currentWeight, featureColumn, intentOkActions, intervalRow, reachesOnlyOk, SEARCH_SPAN, sweptFeatures, walkBuffers, type WeightInterval, weightScale } from "./sensitivity-common.js";

export type { WeightInterval } from "./sensitivity-common.js";

/** Accuracy of the policy evaluations (max-norm, proven by the engine). */
const EVAL_ACCURACY = 1e-12;
/** Relative tolerance of a tie between two action values (or slopes). */
const TIE = 1e-9;
/** Cap on policy-iteration rounds at one point and on breakpoints crossed per direction. */
const MAX_ROUNDS = 200;
const MAX_BREAKS = 100_000;

interface Evaluated {
  v0: Float64Array;
  vf: Float64Array;
}

export function weightIntervals(ctx: AuditContext, features?: string[]): WeightInterval[] {
  if (!(ctx.gamma < 1)) return weightIntervalsBisection(ctx, features);
  const { model, gamma } = ctx;
  const nS = model.nStates;
  const nA = model.nActions;
  const { saStart, next, prob, terminal } = model;
  const okAction = intentOkActions(ctx);
  const { list, maxW } = sweptFeatures(ctx, features);
  const rBase = expectedReward(model, ctx.rd);
  const liveList: number[] = [];
  for (let s = 0; s < nS; s++) if (ctx.reachable[s] && !terminal[s]) liveList.push(s);
  const live = Int32Array.from(liveList);
  const q0 = new Float64Array(nS * nA);
  const qf = new Float64Array(nS * nA);
  const buf = walkBuffers(nS);
  const out: WeightInterval[] = [];
  for (const feature of list) {
    const f = model.features.indexOf(feature);
    if (f < 0) continue;
    const phi = featureColumn(model, f);
    const fexp = expectedReward(model, phi);
    const w0 = currentWeight(ctx, feature);
    const span = SEARCH_SPAN * weightScale(w0, maxW);
    let probes = 0;
    // V0, Vf of pi and the action values q0, qf of every live pair.
    const evaluate = (pi: Int32Array): Evaluated => {
      probes++;
      const [e0, ef] = evaluatePolicyEngineMany(model, [ctx.rd, phi], deterministicPolicy(model, pi), { gamma, accuracy: EVAL_ACCURACY });
      const v0 = e0.values;
      const vf = ef.values;
      for (let i = 0; i < live.length; i++) {
        const s = live[i];
        for (let k = s * nA; k < (s + 1) * nA; k++) {
          let a0 = 0;
          let af = 0;
          for (let o = saStart[k]; o < saStart[k + 1]; o++) ((a0 += prob[o] * v0[next[o]]), (af += prob[o] * vf[next[o]]));
          q0[k] = rBase[k] + gamma * a0;
          qf[k] = fexp[k] + gamma * af;
        }
      }
      return { v0, vf };
    };
    // One improvement step at t, comparing (Q(t), dir * slope, -index); true if pi changed.
    const improve = (pi: Int32Array, ev: Evaluated, t: number, dir: number): boolean => {
      let changed = false;
      for (let i = 0; i < live.length; i++) {
        const s = live[i];
        const base = s * nA;
        const tolV = TIE * (1 + Math.abs(ev.v0[s] + t * ev.vf[s]));
        const tolM = TIE * (1 + Math.abs(ev.vf[s]));
        let b = pi[s];
        for (let a = 0; a < nA; a++) {
          if (a === b) continue;
          const dv = q0[base + a] - q0[base + b] + t * (qf[base + a] - qf[base + b]);
          if (dv < -tolV) continue;
          if (dv <= tolV) {
            const dm = dir * (qf[base + a] - qf[base + b]);
            if (dm < -tolM) continue;
            if (dm <= tolM && a > b) continue;
          }
          b = a;
        }
        if (b !== pi[s]) ((pi[s] = b), (changed = true));
      }
      return changed;
    };
    // Policy iteration at t (from pi, in place, whose evaluation ev is current) to the policy optimal at t + dir * 0.
    const solveAt = (pi: Int32Array, ev: Evaluated, t: number, dir: number): Evaluated => {
      for (let round = 0; round < MAX_ROUNDS && improve(pi, ev, t, dir); round++) ev = evaluate(pi);
      return ev;
    };
    // The nearest t beyond tCur (direction dir) where some action catches up with pi; +-Infinity if none.
    const nextEdge = (pi: Int32Array, tCur: number, dir: number): number => {
      let te = dir * Infinity;
      for (let i = 0; i < live.length; i++) {
        const s = live[i];
        const kp = s * nA + pi[s];
        for (let k = s * nA; k < (s + 1) * nA; k++) {
          const m = qf[k] - qf[kp];
          if (dir * m <= TIE * (1 + Math.abs(qf[kp]))) continue;
          let root = -(q0[k] - q0[kp]) / m;
          if (dir * (root - tCur) < 0) root = tCur;
          if (dir * (root - te) < 0) te = root;
        }
      }
      return te;
    };
    const pi0 = Int32Array.from(ctx.solve.designerOptimal.policy);
    const ev0 = solveAt(pi0, evaluate(pi0), 0, 0);
    const ok0 = reachesOnlyOk(model, pi0, okAction, buf);
    const edge = (dir: number): number => {
      const pi = pi0.slice();
      let ev = ev0;
      if (dir > 0) ev = evaluate(pi); // q0, qf were overwritten by the other direction
      let t = 0;
      for (let n = 0; n < MAX_BREAKS; n++) {
        const te = nextEdge(pi, t, dir);
        if (!(Math.abs(te) <= span)) return dir * Infinity;
        ev = solveAt(pi, ev, te, dir);
        if (reachesOnlyOk(model, pi, okAction, buf) !== ok0) return w0 + te;
        t = te;
      }
      // Cap reached (not seen on the built-ins): conservative answers, the last breakpoint crossed as
      // the edge of an ok interval, no fix claimed otherwise.
      return ok0 ? w0 + t : dir * Infinity;
    };
    out.push(intervalRow(feature, w0, ok0, edge(-1), edge(1), probes));
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
            ? `no value of the ${w.feature} weight alone (within ${fmt(SEARCH_SPAN * scale)} of ${w.weight}) makes the designer-optimal policy intent-optimal`
            : `setting the ${w.feature} weight to ${fmt(w.fixAt)} (now ${w.weight}) would make the designer-optimal policy intent-optimal`,
        evidence: { ...w },
      });
    }
  }
  return findings;
}
