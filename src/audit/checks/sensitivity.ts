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
 * or the edge is beyond SEARCH_SPAN * scale (reported as +-Infinity).
 *
 * Cost (parametric-walk.ts): V0 and the improvement at w0 do not depend on the feature and are computed
 * once; each feature adds one evaluation of Vf (none for a feature that is 0 on every reachable
 * outcome: no edge, the interval is unbounded). A breakpoint changes the action of a few states; only
 * the states that reach them under the new policy change value, so only those are re-solved (engine
 * `evaluateOnStates`, the rest held) and only the action values leading into them recomputed. The cost
 * is the breakpoints crossed times the size of their upstream sets, not a grid nor a full solve each.
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
import { expectedReward } from "../../solve/sweeps.js";
import { ParametricWalk, type WalkState } from "./parametric-walk.js";
import { weightIntervalsBisection } from "./sensitivity-bisection.js";
import { currentWeight, featureColumn, intentOkActions, intervalRow, reachesOnlyOk, SEARCH_SPAN, sweptFeatures, walkBuffers, type WeightInterval, weightScale } from "./sensitivity-common.js";

export type { WeightInterval } from "./sensitivity-common.js";

/** Cap on breakpoints crossed per direction. */
const MAX_BREAKS = 100_000;

export function weightIntervals(ctx: AuditContext, features?: string[]): WeightInterval[] {
  if (!(ctx.gamma < 1)) return weightIntervalsBisection(ctx, features);
  const { model } = ctx;
  const okAction = intentOkActions(ctx);
  const { list, maxW } = sweptFeatures(ctx, features);
  const walk = new ParametricWalk(model, ctx.reachable, expectedReward(model, ctx.rd), ctx.gamma);
  // The policy at w0 (greedy, lowest index on ties) and its V0: the same for every feature.
  const base = walk.start(ctx.solve.designerOptimal.policy);
  const ok0 = reachesOnlyOk(model, base.pi, okAction, walkBuffers(model.nStates));
  const buf = walkBuffers(model.nStates);
  const out: WeightInterval[] = [];
  for (const feature of list) {
    const f = model.features.indexOf(feature);
    if (f < 0) continue;
    const w0 = currentWeight(ctx, feature);
    const fexp = expectedReward(model, featureColumn(model, f));
    const span = SEARCH_SPAN * weightScale(w0, maxW);
    if (!walk.moves(fexp)) {
      // Every reachable action value is flat in this weight: no breakpoint anywhere.
      out.push(intervalRow(feature, w0, ok0, -Infinity, Infinity, 0, span));
      continue;
    }
    const atW0 = walk.withFeature(base, fexp);
    const edge = (dir: number): number => {
      const st: WalkState = walk.copy(atW0);
      let t = 0;
      for (let n = 0; n < MAX_BREAKS; n++) {
        const te = walk.nextEdge(st, t, dir);
        if (!(Math.abs(te) <= span)) return dir * Infinity;
        walk.solveAt(st, te, dir);
        if (reachesOnlyOk(model, st.pi, okAction, buf) !== ok0) return w0 + te;
        t = te;
      }
      // Cap reached (not seen on the built-ins): conservative answers, the last breakpoint crossed as
      // the edge of an ok interval, no fix claimed otherwise.
      return ok0 ? w0 + t : dir * Infinity;
    };
    const down = edge(-1);
    const up = edge(1);
    out.push(intervalRow(feature, w0, ok0, down, up, walk.takeEvaluations(), span));
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
