/**
 * regret: intent the designer-optimal policy gives up against the intent-optimal one, absolute and
 * normalized (regretNorm = regret / (intent-optimal - uniform random), see src/solve/compare.ts), with
 * the first state along the designer-optimal policy's most likely path where the two policies choose
 * differently (where the designer's action is worse for intent than the intent-optimal action by more
 * than a rounding margin; equally good alternatives are not a divergence), and (`givenUp`) the cells the
 * designer-optimal route enters by a step worse for intent than every step of the intended route
 * (../given-up.ts), drawn on the map by the terminal and HTML reports.
 *
 * Severity (our defaults, options regretCritical / regretWarning): critical when regretNorm >= 0.3
 * (the designer-optimal behaviour gives up at least 30% of the intent achievable above random),
 * warning when >= 0.05, info below. These are our conventions, not a published standard.
 *
 * regret-by-group: for start states carrying group labels, the same numbers per group (the start
 * distribution restricted to the group's start states). Flagged when the normalized regrets of two
 * groups differ by >= groupGap (default 0.2): critical if the worst-served group's regretNorm is also
 * >= regretCritical, else a warning.
 */
import type { AuditContext } from "../context.js";
import { fmt, labelsOf } from "../context.js";
import { likelyStart, tracePolicy } from "../../model/likely-path.js";
import type { Finding } from "../findings.js";
import { givenUpStates } from "../given-up.js";
import { regretText } from "../../util/share.js";
import { actionValues } from "../../solve/sweeps.js";

export interface Divergence {
  state: string;
  stateId: number;
  step: number;
  designerAction: string;
  intentAction: string;
  /** Intent action values of the two choices at that state. */
  intentOfDesignerAction: number;
  intentOfIntentAction: number;
  /** The designer-optimal path up to and including the divergence state. */
  pathStates: number[];
}

export function firstDivergence(ctx: AuditContext): Divergence | null {
  const { model, solve, gamma } = ctx;
  const qI = actionValues(model, model.intent, solve.intentOptimal.values, gamma);
  const dPol = solve.designerOptimal.policy;
  const iPol = solve.intentOptimal.policy;
  const tr = tracePolicy(model, dPol, likelyStart(model), Math.max(model.horizon, model.nStates + 1));
  const nA = model.nActions;
  for (let t = 0; t < tr.states.length; t++) {
    const s = tr.states[t];
    if (model.terminal[s] || dPol[s] < 0) break;
    const qd = qI[s * nA + dPol[s]];
    const qi = qI[s * nA + iPol[s]];
    if (qd < qi - 1e-9 * (1 + Math.abs(qi))) {
      return {
        state: model.stateLabels[s],
        stateId: s,
        step: t,
        designerAction: model.actions[dPol[s]],
        intentAction: model.actions[iPol[s]],
        intentOfDesignerAction: qd,
        intentOfIntentAction: qi,
        pathStates: tr.states.slice(0, t + 1),
      };
    }
  }
  return null;
}

export function regretCheck(ctx: AuditContext): Finding[] {
  const { solve, opts } = ctx;
  const { regret, regretNorm } = solve;
  const severity = regretNorm >= opts.regretCritical ? "critical" : regretNorm >= opts.regretWarning ? "warning" : "info";
  const div = severity === "info" ? null : firstDivergence(ctx);
  const given = severity === "info" ? [] : givenUpStates(ctx.model, solve.designerOptimal.policy, solve.intentOptimal.policy);
  const pct = `${(100 * regretNorm).toFixed(1)}%`;
  let message =
    severity === "info"
      ? `the designer-optimal policy keeps the intended outcome: regret ${fmt(regret)} (${pct} of the achievable range above random)`
      : regretNorm > 1
        ? `optimizing this reward gives up ${fmt(regret)} intent and ${regretText(regretNorm)}`
        : `optimizing this reward gives up ${fmt(regret)} intent (${pct} of the range between random behaviour and the intent-optimal policy)`;
  if (div) message += `; the designer-optimal policy first departs from the intended behaviour at ${div.state} (step ${div.step}): it goes ${div.designerAction} where ${div.intentAction} is intended`;
  return [
    {
      check: "regret",
      severity,
      message,
      evidence: {
        regret,
        regretNorm,
        intentOptimal: solve.intentOptimal.intent,
        intentOfDesignerOptimal: solve.designerOptimal.intent,
        intentOfRandom: solve.random.intent,
        designerOfDesignerOptimal: solve.designerOptimal.designer,
        designerOfIntentOptimal: solve.intentOptimal.designer,
        thresholds: { critical: opts.regretCritical, warning: opts.regretWarning },
        ...(div ? { firstDivergence: div } : {}),
        ...(given.length ? { givenUp: { cells: labelsOf(ctx.model, given), stateIds: given } } : {}),
      },
    },
  ];
}

export interface GroupRegret {
  group: string;
  starts: string[];
  startWeight: number;
  intentOptimal: number;
  intentOfDesignerOptimal: number;
  intentOfRandom: number;
  regret: number;
  regretNorm: number;
}

export function groupRegrets(ctx: AuditContext): GroupRegret[] {
  const { model, solve, intentOfD, intentOfRandom } = ctx;
  if (!model.groups) return [];
  const byGroup = new Map<string, number[]>();
  for (let s = 0; s < model.nStates; s++) {
    const g = model.groups[s];
    if (g === null || g === undefined || !(model.start[s] > 0)) continue;
    if (!byGroup.has(g)) byGroup.set(g, []);
    byGroup.get(g)!.push(s);
  }
  const vI = solve.intentOptimal.values;
  const out: GroupRegret[] = [];
  for (const [group, starts] of byGroup) {
    let w = 0;
    let best = 0;
    let got = 0;
    let rnd = 0;
    for (const s of starts) {
      const p = model.start[s];
      w += p;
      best += p * vI[s];
      got += p * intentOfD[s];
      rnd += p * intentOfRandom[s];
    }
    best /= w;
    got /= w;
    rnd /= w;
    const regret = best - got;
    const range = best - rnd;
    out.push({ group, starts: labelsOf(model, starts), startWeight: w, intentOptimal: best, intentOfDesignerOptimal: got, intentOfRandom: rnd, regret, regretNorm: Math.abs(range) < 1e-12 ? 0 : regret / range });
  }
  return out.sort((a, b) => (a.group < b.group ? -1 : 1));
}

export function groupRegretCheck(ctx: AuditContext): Finding[] {
  const groups = groupRegrets(ctx);
  if (groups.length < 2) return [];
  const { opts } = ctx;
  const worst = groups.reduce((a, b) => (b.regretNorm > a.regretNorm ? b : a));
  const bestServed = groups.reduce((a, b) => (b.regretNorm < a.regretNorm ? b : a));
  const gap = worst.regretNorm - bestServed.regretNorm;
  // A normalized regret above 1 means worse than random behaviour: said so, never as a percentage above 100.
  const share = (x: number) => (x > 1 ? `${x.toFixed(2)} times the range` : `${(100 * x).toFixed(1)}%`);
  const pct = (x: number) => (x > 1 ? `${share(x)} (worse than random behaviour)` : share(x));
  if (gap < opts.groupGap) {
    return [
      {
        check: "regret-by-group",
        severity: "info",
        message: `the reward serves the ${groups.length} start groups alike: normalized regret ranges over ${groups.map((g) => `${g.group} ${pct(g.regretNorm)}`).join(", ")}`,
        evidence: { groups, gap, threshold: opts.groupGap },
      },
    ];
  }
  const severity = worst.regretNorm >= opts.regretCritical ? "critical" : "warning";
  return [
    {
      check: "regret-by-group",
      severity,
      message: `the reward serves group ${worst.group} markedly worse than ${bestServed.group}: normalized regret ${pct(worst.regretNorm)} vs ${pct(bestServed.regretNorm)} (gap ${share(gap)} >= ${share(opts.groupGap)}); an average over all starts hides this`,
      evidence: { groups, gap, threshold: opts.groupGap, worst: worst.group },
    },
  ];
}

