/**
 * risk-indifference: for models with catastrophic terminal states, how likely does the
 * designer-optimal route end in one, and at which failure probability would the designer reward be
 * indifferent between that route and the safe alternative (./indifference.ts)?
 *
 * Catastrophic (default detection, override with the `catastrophic` option): a terminal state entered
 * through a positive-probability outcome that fires a feature named "hazard" (the grid family's
 * declared catastrophic event), or whose label ends in "hazard", or whose entering outcome has intent
 * <= -2 x the largest positive intent of any outcome (losing at least twice what the best single
 * event is worth: our convention for "strongly negative").
 *
 * Safe alternative: the intent-optimal policy, unless it fails more often than the designer-optimal
 * one; then the minimum-failure policy (exact, value iteration on the failure indicator).
 *
 * Severity: critical when the designer-optimal policy's failure probability exceeds `maxRisk`
 * (default 0.01, our default; pass the tolerance of your domain) and exceeds the safe alternative's;
 * info otherwise. Evidence includes p*, the route's conditional returns and the largest designer value
 * of a failure at which the reward would already refuse routes failing more often than maxRisk:
 * fail_max = ok - (ok - safe) / maxRisk (from p* = (ok - safe) / (ok - fail) = maxRisk).
 */
import type { AuditContext } from "../context.js";
import { fmt } from "../context.js";
import { likelyStart, tracePolicy } from "../../model/likely-path.js";
import type { Finding } from "../findings.js";
import { failureProbability, riskAudit } from "../indifference.js";
import type { FiniteModel } from "../../model/types.js";
import { deterministicPolicy, startValue } from "../../solve/policy.js";
import { optimalSolution } from "../../solve/default-solver.js";

export function catastrophicStates(model: FiniteModel): Uint8Array {
  const { nStates: nS, nActions: nA, saStart, next, prob, terminal, intent, featureValues } = model;
  const flags = new Uint8Array(nS);
  const nF = model.features.length;
  const hz = model.features.indexOf("hazard");
  let maxPos = 0;
  for (let o = 0; o < intent.length; o++) if (intent[o] > maxPos) maxPos = intent[o];
  for (let s = 0; s < nS; s++) if (terminal[s] && /(^|\s)hazard$/.test(model.stateLabels[s] ?? "")) flags[s] = 1;
  for (let s = 0; s < nS; s++) {
    if (terminal[s]) continue;
    for (let o = saStart[s * nA]; o < saStart[(s + 1) * nA]; o++) {
      const t = next[o];
      if (!terminal[t] || !(prob[o] > 0)) continue;
      if ((hz >= 0 && featureValues[o * nF + hz] > 0) || (maxPos > 0 && intent[o] <= -2 * maxPos)) flags[t] = 1;
    }
  }
  return flags;
}

export function riskCheck(ctx: AuditContext): Finding[] {
  const { model, opts, rd, gamma, dPolicy } = ctx;
  const flags = opts.catastrophic ?? catastrophicStates(model);
  let count = 0;
  for (let s = 0; s < model.nStates; s++) if (flags[s] && ctx.reachable[s]) count++;
  if (count === 0) return [];
  let safe = ctx.iPolicy;
  let safeName = "intent-optimal";
  const pD = startValue(model, failureProbability(model, dPolicy, flags));
  if (startValue(model, failureProbability(model, safe, flags)) > pD) {
    const ind = new Float64Array(model.next.length);
    for (let o = 0; o < ind.length; o++) ind[o] = flags[model.next[o]] ? -1 : 0;
    const minFail = optimalSolution(model, ind, { gamma: 1, tol: 1e-12, accuracy: 1e-12 });
    safe = deterministicPolicy(model, minFail.policy);
    safeName = "minimum-failure";
  }
  const r = riskAudit(model, { reward: rd, risky: dPolicy, safe, catastrophic: flags, gamma });
  const route = tracePolicy(model, ctx.solve.designerOptimal.policy, likelyStart(model));
  const safeActions = new Int32Array(model.nStates);
  for (let s = 0; s < model.nStates; s++) {
    let b = -1;
    for (let a = 0; a < model.nActions; a++) if (safe[s * model.nActions + a] > (b < 0 ? 0 : safe[s * model.nActions + b])) b = a;
    safeActions[s] = model.terminal[s] ? -1 : b;
  }
  const safeRoute = tracePolicy(model, safeActions, likelyStart(model));
  const pStar = r.indifference ? r.indifference.pStar : null;
  const failMax = Number.isFinite(r.okReturn) ? r.okReturn - (r.okReturn - r.safeReturn) / opts.maxRisk : null;
  const evidence = {
    catastrophicStates: count,
    failProbability: r.failProb,
    safeFailProbability: r.safeFailProb,
    safePolicy: safeName,
    maxRisk: opts.maxRisk,
    indifferenceProbability: pStar,
    indifferenceKind: r.indifference?.kind ?? null,
    returnIfOk: r.okReturn,
    returnIfFail: r.failReturn,
    safeReturn: r.safeReturn,
    riskyReturn: r.riskyReturn,
    failValueNeeded: failMax,
    riskyRoute: route.states,
    safeRoute: safeRoute.states,
  };
  if (r.failProb > opts.maxRisk && r.failProb > r.safeFailProb + 1e-12) {
    let message = `the designer-optimal route ends in a catastrophic state with probability ${fmt(r.failProb)}, above the tolerated ${fmt(opts.maxRisk)} (the ${safeName} alternative: ${fmt(r.safeFailProb)})`;
    if (pStar !== null && r.indifference?.kind === "threshold") {
      message += `; the reward is indifferent between the two routes at failure probability ${fmt(pStar)}, so it accepts any risk below that`;
    }
    if (failMax !== null && Number.isFinite(r.failReturn)) {
      message += `; a failure is worth ${fmt(r.failReturn)} to the designer, it would need to be worth at most ${fmt(failMax)} for the reward to refuse failure rates above ${fmt(opts.maxRisk)}`;
    }
    return [{ check: "risk-indifference", severity: "critical", message, evidence }];
  }
  return [
    {
      check: "risk-indifference",
      severity: "info",
      message: `the designer-optimal route ends in a catastrophic state with probability ${fmt(r.failProb)}, within the tolerated ${fmt(opts.maxRisk)}`,
      evidence,
    },
  ];
}
