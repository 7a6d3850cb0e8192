/**
 * shaping: are the variant's shaping terms potential-based (Ng, Harada & Russell 1999), so that they
 * cannot change which policy is optimal? Uses ../shaping.ts on the exact per-outcome term.
 *  - The variant's `shaping` block: F = designer reward with shaping - designer reward without it.
 *    Potential-based: info. Not (possible only through an inconsistent potential): warning, with the
 *    witness (a violated outcome and the chains that disagree / a cycle on which F sums to non-zero).
 *  - Each weighted feature term w_f * f: if it is potential-based on its own it is reported as pure
 *    shaping (info). If it is not, and the maximum-mean loop of that term alone (reachable choice
 *    graph, as in the loop check) pays a positive amount per step while earning no intent, it is a
 *    "shaping-like" bonus that repeats: warning, with the loop. (Ordinary task terms - a goal paid once -
 *    are not potential-based either; they are not reported.)
 */
import type { AuditContext } from "../context.js";
import { actionNames, fmt, labelsOf, reachableChoiceComponents, reachableChoiceGraph } from "../context.js";
import { choiceLoop, cyclicEdges, reweighted } from "../choice-graph.js";
import { maxMeanCycle } from "../cycles.js";
import type { Finding } from "../findings.js";
import { checkPotentialShaping, type ShapingCheck } from "../shaping.js";
import { designerReward } from "../../model/reward.js";
import { ownValue } from "../../util/own.js";

function summarizeCheck(model: AuditContext["model"], c: ShapingCheck): Record<string, unknown> {
  if (c.potentialBased) return { potentialBased: true, maxResidual: c.maxResidual, tol: c.tol };
  return {
    potentialBased: false,
    residual: c.residual,
    violated: { state: model.stateLabels[c.edge.state], action: model.actions[c.edge.action], next: model.stateLabels[c.edge.next], value: c.edge.f },
    witness: c.witness.kind,
    ...(c.loop ? { loop: { states: labelsOf(model, c.loop.states), sumPerLap: c.loop.sum, meanPerStep: c.loop.mean } } : {}),
  };
}

/** A term loop is reported when it pays more than this per step. */
const LOOP_PAYS = 1e-9;

export function shapingCheck(ctx: AuditContext): Finding[] {
  const { model, variant, gamma } = ctx;
  const findings: Finding[] = [];
  if (variant.shaping) {
    const plain = designerReward(model, { ...variant, shaping: undefined }, gamma);
    const F = new Float64Array(plain.length);
    for (let o = 0; o < F.length; o++) F[o] = ctx.rd[o] - plain[o];
    const c = checkPotentialShaping(model, F, { gamma });
    const pot = typeof variant.shaping.potential === "string" ? `"${variant.shaping.potential}"` : "given per state";
    findings.push(
      c.potentialBased
        ? {
            check: "shaping",
            severity: "info",
            message: `the shaping term (potential ${pot}, scale ${variant.shaping.scale}) is potential-based: it cannot change which policy is optimal`,
            evidence: summarizeCheck(model, c),
          }
        : {
            check: "shaping",
            severity: "warning",
            message: `the shaping term (potential ${pot}) is not potential-based (residual ${fmt(c.residual)} at ${model.stateLabels[c.edge.state]}): it can change which policy is optimal`,
            evidence: summarizeCheck(model, c),
          },
    );
  }
  // Feature terms.
  const nF = model.features.length;
  const nO = model.next.length;
  const T = new Float64Array(nO);
  let cyclic: Uint8Array | null = null;
  const onCycle = () => (cyclic ??= cyclicEdges(reachableChoiceGraph(ctx), reachableChoiceComponents(ctx).comp));
  for (let f = 0; f < nF; f++) {
    const name = model.features[f];
    const w = ownValue(variant.weights, name) ?? 0;
    if (w === 0) continue;
    for (let o = 0; o < nO; o++) T[o] = w * model.featureValues[o * nF + f];
    const c = checkPotentialShaping(model, T, { gamma });
    if (c.potentialBased) {
      findings.push({ check: "shaping", severity: "info", message: `the term ${name} (weight ${w}) is potential-based shaping on its own`, evidence: { feature: name, weight: w, ...summarizeCheck(model, c) } });
      continue;
    }
    const loop = termLoop(ctx, T, onCycle);
    if (loop && loop.mean > LOOP_PAYS && loop.intentMean <= 1e-9) {
      findings.push({
        check: "shaping",
        severity: "warning",
        message: `the term ${name} (weight ${w}) is not potential-based and pays ${fmt(loop.mean)} per step on a repeatable ${loop.states.length}-step loop that earns no intent: a bonus that can be farmed`,
        evidence: { feature: name, weight: w, loop: { states: loop.states, actions: loop.actions, stateIds: loop.stateIds, termPerStep: loop.mean, intentPerStep: loop.intentMean } },
      });
    }
  }
  return findings;
}

/** The term's best loop, or null when no loop can pay it more than LOOP_PAYS per step. */
function termLoop(ctx: AuditContext, T: Float64Array, onCycle: () => Uint8Array) {
  const { model } = ctx;
  const base = reachableChoiceGraph(ctx);
  // A cycle's mean is at most its largest edge: with no edge on a cycle paying more than LOOP_PAYS,
  // no loop can (the common case of a goal bonus or a cost: skips the cycle search).
  const cyclic = onCycle();
  let top = -Infinity;
  for (let e = 0; e < cyclic.length; e++) if (cyclic[e] && T[base.outcome[e]] > top) top = T[base.outcome[e]];
  if (!(top > LOOP_PAYS)) return null;
  const g = reweighted(base, T);
  const c = maxMeanCycle(g, { components: reachableChoiceComponents(ctx) });
  if (!c) return null;
  const { outcomes, actions } = choiceLoop(g, c);
  let im = 0;
  for (const o of outcomes) im += model.intent[o];
  return {
    mean: c.mean,
    intentMean: im / c.edges.length,
    stateIds: c.vertices,
    states: labelsOf(model, c.vertices),
    actions: actionNames(model, actions),
  };
}
