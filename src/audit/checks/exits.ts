/**
 * early-exit / idling: does ending the episode early, or standing still, beat doing the task under the
 * designer reward?
 *
 * Task terminals are the terminal states the intent-optimal policy ends in with positive probability
 * (from the start distribution). Absorption probabilities are exact (undiscounted policy evaluation of
 * "enters this set").
 *  - early-exit: the designer-optimal policy plans to end the episode elsewhere, i.e. ends in a
 *    non-task terminal with probability >= 0.5 (smaller probabilities are accidents of a risky route,
 *    the business of the risk check), and its designer return beats the task's. Critical when its
 *    regretNorm also reaches regretCritical, else a warning.
 *  - idling: the best self-loop ("stand still": an action that surely stays in a reachable state) pays
 *    more designer reward per step than the task rate (../context.ts). Critical when the
 *    designer-optimal policy actually ends its most likely path in that self-loop and regretNorm
 *    reaches regretCritical, else a warning.
 */
import type { AuditContext } from "../context.js";
import { fmt, labelsOf } from "../context.js";
import { likelyStart, tracePolicy } from "../../model/likely-path.js";
import type { Finding } from "../findings.js";
import { policyValues } from "../../solve/default-solver.js";
import { startValue } from "../../solve/policy.js";
import type { Policy } from "../../solve/sweeps.js";
import type { FiniteModel } from "../../model/types.js";

/** Probability of ever entering a state flagged in `set`, from the start distribution, under `policy`. */
export function enterProbability(model: FiniteModel, policy: Policy, set: Uint8Array): number {
  const { nStates: nS, nActions: nA, saStart, next, terminal } = model;
  const ind = new Float64Array(model.next.length);
  for (let s = 0; s < nS; s++) {
    if (terminal[s]) continue;
    for (let o = saStart[s * nA]; o < saStart[(s + 1) * nA]; o++) if (set[next[o]]) ind[o] = 1;
  }
  return startValue(model, policyValues(model, ind, policy, { gamma: 1, tol: 1e-12, accuracy: 1e-12 }).values);
}

/** Terminal states the policy enters with positive probability from the start distribution (0/1 per state). */
export function enteredTerminals(model: FiniteModel, policy: Policy): Uint8Array {
  // Forward reachability under the policy's support.
  const { nStates: nS, nActions: nA, saStart, next, prob, terminal } = model;
  const seen = new Uint8Array(nS);
  const stack: number[] = [];
  for (let s = 0; s < nS; s++) if (model.start[s] > 0) ((seen[s] = 1), stack.push(s));
  while (stack.length) {
    const s = stack.pop()!;
    if (terminal[s]) continue;
    for (let a = 0; a < nA; a++) {
      if (!(policy[s * nA + a] > 0)) continue;
      for (let o = saStart[s * nA + a]; o < saStart[s * nA + a + 1]; o++) {
        if (prob[o] > 0 && !seen[next[o]]) ((seen[next[o]] = 1), stack.push(next[o]));
      }
    }
  }
  const out = new Uint8Array(nS);
  for (let s = 0; s < nS; s++) if (seen[s] && terminal[s]) out[s] = 1;
  return out;
}

export function earlyExitCheck(ctx: AuditContext): Finding[] {
  const { model, solve, opts, dPolicy, iPolicy } = ctx;
  const taskT = enteredTerminals(model, iPolicy);
  const dT = enteredTerminals(model, dPolicy);
  const other = new Uint8Array(model.nStates);
  let anyOther = false;
  for (let s = 0; s < model.nStates; s++) if (dT[s] && !taskT[s]) ((other[s] = 1), (anyOther = true));
  const findings: Finding[] = [];
  const taskValue = solve.intentOptimal.designer;
  const dValue = solve.designerOptimal.designer;
  if (anyOther) {
    const pOther = enterProbability(model, dPolicy, other);
    const where = labelsOf(model, [...other.keys()].filter((s) => other[s]).slice(0, 8));
    const evidence = {
      exitProbability: pOther,
      exitStates: where,
      designerOfDesignerOptimal: dValue,
      designerOfTask: taskValue,
      discountedStepsDesignerOptimal: startValue(model, ctx.stepsOfD),
      discountedStepsTask: ctx.task.steps,
    };
    if (pOther >= 0.5 && dValue > taskValue + 1e-9 * (1 + Math.abs(taskValue))) {
      findings.push({
        check: "early-exit",
        severity: solve.regretNorm >= opts.regretCritical ? "critical" : "warning",
        message: `ending the episode early beats doing the task: the designer-optimal policy ends at ${where.join(", ")} with probability ${fmt(pOther)} (designer return ${fmt(dValue)} vs ${fmt(taskValue)} for doing the task)`,
        evidence,
      });
    } else {
      findings.push({
        check: "early-exit",
        severity: "info",
        message: `the designer-optimal policy ends the episode outside the task's terminal states with probability ${fmt(pOther)} (below 0.5: not its plan; see the risk check)`,
        evidence,
      });
    }
  }
  // Idling: certain self-loops of reachable, non-terminal states.
  const { nStates: nS, nActions: nA, saStart, next, prob, terminal } = model;
  let bestR = -Infinity;
  let bestS = -1;
  let bestA = -1;
  for (let s = 0; s < nS; s++) {
    if (terminal[s] || !ctx.reachable[s]) continue;
    for (let a = 0; a < nA; a++) {
      const k = s * nA + a;
      if (saStart[k + 1] - saStart[k] !== 1) continue;
      const o = saStart[k];
      if (next[o] !== s || prob[o] < 1 - 1e-12) continue;
      if (ctx.rd[o] > bestR) ((bestR = ctx.rd[o]), (bestS = s), (bestA = a));
    }
  }
  if (bestS >= 0) {
    const tr = tracePolicy(model, solve.designerOptimal.policy, likelyStart(model), Math.max(model.horizon, nS + 1));
    const idles = tr.loopStart >= 0 && tr.states.length - tr.loopStart === 1;
    const idleState = idles ? tr.states[tr.loopStart] : -1;
    const evidence = {
      idleState: model.stateLabels[bestS],
      idleStateId: bestS,
      idleAction: model.actions[bestA],
      designerPerStep: bestR,
      taskDesignerPerStep: ctx.task.designerRate,
      designerOptimalIdlesAt: idles ? model.stateLabels[idleState] : null,
    };
    if (bestR > ctx.task.designerRate + 1e-9 * (1 + Math.abs(ctx.task.designerRate))) {
      findings.push({
        check: "idling",
        severity: idles && solve.regretNorm >= opts.regretCritical ? "critical" : "warning",
        message: `standing still beats doing the task: "${model.actions[bestA]}" at ${model.stateLabels[bestS]} pays ${fmt(bestR)} per step, more than the task's ${fmt(ctx.task.designerRate)}${idles ? "; the designer-optimal policy idles" : ""}`,
        evidence,
      });
    } else {
      findings.push({
        check: "idling",
        severity: "info",
        message: `standing still pays at most ${fmt(bestR)} per step, not more than doing the task (${fmt(ctx.task.designerRate)})`,
        evidence,
      });
    }
  }
  return findings;
}
