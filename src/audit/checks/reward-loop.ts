/**
 * reward-loop: is there a loop the agent can choose to repeat whose mean designer reward per step beats
 * what doing the task pays per step (see `taskRate` in ../context.ts)?
 *
 * Exact: the maximum mean cycle (Karp 1978, via ../cycles.ts) of the choice graph restricted to states
 * reachable from the start. Edges are the outcomes with probability >= `loopMinProb` (default 0.5, the
 * outcome each action aims for); a lap that uses an edge of probability < 1 completes as planned with
 * the product of its edge probabilities, reported as `lapProbability`.
 *
 * Severity: critical when the loop beats the task's designer rate and earns less intent per step than
 * the task does (the reward pays for repetition that is not the task); info otherwise (including a
 * loop that beats the task but earns at least as much intent: that loop *is* the task, e.g. circuits
 * of a continuing task). Comparisons use a margin of 1e-9 * (1 + |rate|).
 *
 * Also reported: the designer-optimal policy's own recurrent loop, when its most likely path from the
 * most likely start repeats a state instead of ending.
 */
import { choiceLoop } from "../choice-graph.js";
import { maxMeanCycle } from "../cycles.js";
import type { AuditContext } from "../context.js";
import { actionNames, fmt, labelsOf, reachableChoiceComponents, reachableChoiceGraph } from "../context.js";
import { likelyStart, tracePolicy } from "../../model/likely-path.js";
import type { Finding, LoopReport } from "../findings.js";

export interface LoopEvidence extends LoopReport {
  stateIds: number[];
  actionIds: number[];
  outcomes: number[];
  length: number;
  lapProbability: number;
}

export function loopFromOutcomes(ctx: AuditContext, stateIds: number[], outcomes: number[], actionIds: number[]): LoopEvidence {
  const { model, rd } = ctx;
  let d = 0;
  let i = 0;
  let p = 1;
  for (const o of outcomes) {
    d += rd[o];
    i += model.intent[o];
    p *= model.prob[o];
  }
  const n = outcomes.length;
  return {
    meanDesignerPerStep: d / n,
    meanIntentPerStep: i / n,
    states: labelsOf(model, stateIds),
    actions: actionNames(model, actionIds),
    stateIds,
    actionIds,
    outcomes,
    length: n,
    lapProbability: p,
  };
}

/** The best loop of the reachable choice graph, or null if the graph has no cycle. */
export function bestLoop(ctx: AuditContext): LoopEvidence | null {
  const g = reachableChoiceGraph(ctx);
  const c = maxMeanCycle(g, { components: reachableChoiceComponents(ctx) });
  if (!c) return null;
  const loop = choiceLoop(g, c);
  const ev = loopFromOutcomes(ctx, loop.states, loop.outcomes, loop.actions);
  ev.meanDesignerPerStep = c.mean;
  return ev;
}

/** The recurrent loop the designer-optimal policy's most likely path ends in, or null. */
export function designerOptimalLoop(ctx: AuditContext): LoopEvidence | null {
  const tr = tracePolicy(ctx.model, ctx.solve.designerOptimal.policy, likelyStart(ctx.model), Math.max(ctx.model.horizon, ctx.model.nStates + 1));
  if (tr.loopStart < 0) return null;
  const st = tr.states.slice(tr.loopStart);
  return loopFromOutcomes(ctx, st, tr.outcomes.slice(tr.loopStart), tr.actions.slice(tr.loopStart));
}

const beats = (a: number, b: number) => a > b + 1e-9 * (1 + Math.abs(b));

export function rewardLoopCheck(ctx: AuditContext): { findings: Finding[]; loops: LoopEvidence[] } {
  const best = bestLoop(ctx);
  const own = designerOptimalLoop(ctx);
  const loops: LoopEvidence[] = [];
  if (best) loops.push(best);
  if (own && !(best && sameCycle(own.stateIds, best.stateIds))) loops.push(own);
  const { task } = ctx;
  const taskEv = { taskDesignerPerStep: task.designerRate, taskIntentPerStep: task.intentRate, taskDiscountedSteps: task.steps };
  if (!best) {
    return {
      loops,
      findings: [{ check: "reward-loop", severity: "info", message: "no loop can be repeated by choice from the start states", evidence: { ...taskEv } }],
    };
  }
  const ridden = own !== null && sameCycle(own.stateIds, best.stateIds);
  const evidence = { ...taskEv, loop: best, riddenByDesignerOptimal: ridden };
  const lap = best.lapProbability < 1 - 1e-12 ? ` (a lap completes as planned with probability ${fmt(best.lapProbability)})` : "";
  const desc = `a ${best.length}-step loop through ${best.states[0]}${best.length > 1 ? ` .. ${best.states[best.length - 1]}` : ""}`;
  if (!beats(best.meanDesignerPerStep, task.designerRate)) {
    return {
      loops,
      findings: [
        {
          check: "reward-loop",
          severity: "info",
          message: `no repeatable loop pays more per step than doing the task: the best, ${desc}, pays ${fmt(best.meanDesignerPerStep)} per step against ${fmt(task.designerRate)} for the task`,
          evidence,
        },
      ],
    };
  }
  if (best.meanIntentPerStep < task.intentRate - 1e-9 * (1 + Math.abs(task.intentRate))) {
    return {
      loops,
      findings: [
        {
          check: "reward-loop",
          severity: "critical",
          message:
            `reward loop: ${desc} pays ${fmt(best.meanDesignerPerStep)} designer reward per step, more than the ${fmt(task.designerRate)} per step of doing the task, ` +
            `while earning ${fmt(best.meanIntentPerStep)} intent per step against the task's ${fmt(task.intentRate)}${lap}; an optimizer can repeat it instead of doing the task` +
            (ridden ? " (the designer-optimal policy does exactly that)" : ""),
          evidence,
        },
      ],
    };
  }
  return {
    loops,
    findings: [
      {
        check: "reward-loop",
        severity: "info",
        message: `the best-paying loop, ${desc} (${fmt(best.meanDesignerPerStep)} per step), also earns intent at least as fast as the task (${fmt(best.meanIntentPerStep)} vs ${fmt(task.intentRate)} per step): repeating it is doing the task`,
        evidence,
      },
    ],
  };
}

/** Same cycle up to rotation. */
export function sameCycle(a: readonly number[], b: readonly number[]): boolean {
  if (a.length !== b.length) return false;
  const i = b.indexOf(a[0]);
  if (i < 0) return false;
  for (let k = 0; k < a.length; k++) if (a[k] !== b[(i + k) % b.length]) return false;
  return true;
}
