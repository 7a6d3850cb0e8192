/**
 * `runAudit(model, variant, opts)`: every static check over a finite model, in a fixed order, and the
 * document of `gapwatch audit --json`:
 *
 *   { env, reward, findings: [{check, severity, message, evidence}], regret, regretNorm,
 *     loops: [{meanDesignerPerStep, meanIntentPerStep, states, actions}] }
 *
 * Checks (each in ./checks/, each a pure function of the shared AuditContext): reward-loop, shaping,
 * regret, regret-by-group, early-exit, idling, risk-indifference, weight-sensitivity. Findings are
 * sorted by severity (critical first), then by check order. Pure; no I/O.
 */
import type { FiniteModel, RewardVariant } from "../model/types.js";
import { prepareAudit, type AuditContext, type AuditOptions } from "./context.js";
import { earlyExitCheck } from "./checks/exits.js";
import { regretCheck, groupRegretCheck } from "./checks/regret.js";
import { rewardLoopCheck, type LoopEvidence } from "./checks/reward-loop.js";
import { riskCheck } from "./checks/risk.js";
import { sensitivityCheck, type WeightInterval } from "./checks/sensitivity.js";
import { shapingCheck } from "./checks/shaping-terms.js";
import { SEVERITY_RANK, type Finding, type LoopReport, type Severity } from "./findings.js";

export type { AuditOptions } from "./context.js";
export type { Finding, LoopReport, Severity } from "./findings.js";

export interface AuditReport {
  env: string;
  reward: string;
  findings: Finding[];
  regret: number;
  regretNorm: number;
  loops: LoopReport[];
}

export const CHECK_ORDER = ["reward-loop", "shaping", "regret", "regret-by-group", "early-exit", "idling", "risk-indifference", "weight-sensitivity"] as const;

export interface AuditResult extends AuditReport {
  /** Not part of the JSON document: the context and loop evidence (state ids) for drawing. */
  context: AuditContext;
  loopEvidence: LoopEvidence[];
}

export function runAuditDetailed(model: FiniteModel, variant: RewardVariant, opts: AuditOptions = {}): AuditResult {
  const ctx = prepareAudit(model, variant, opts);
  const loop = rewardLoopCheck(ctx);
  const findings: Finding[] = [
    ...loop.findings,
    ...shapingCheck(ctx),
    ...regretCheck(ctx),
    ...groupRegretCheck(ctx),
    ...earlyExitCheck(ctx),
    ...riskCheck(ctx),
  ];
  if (opts.sensitivity !== false) {
    const sens = sensitivityCheck(ctx);
    findings.push(...sens);
    noteOmittedFeatures(findings, sens);
  }
  const order = (c: string) => CHECK_ORDER.indexOf(c as (typeof CHECK_ORDER)[number]);
  const sorted = findings
    .map((f, i) => ({ f, i }))
    .sort((a, b) => SEVERITY_RANK[b.f.severity] - SEVERITY_RANK[a.f.severity] || order(a.f.check) - order(b.f.check) || a.i - b.i)
    .map((x) => x.f);
  return {
    env: model.name,
    reward: variant.name,
    findings: sorted,
    regret: ctx.solve.regret,
    regretNorm: ctx.solve.regretNorm,
    loops: loop.loops.map(({ meanDesignerPerStep, meanIntentPerStep, states, actions }) => ({ meanDesignerPerStep, meanIntentPerStep, states, actions })),
    context: ctx,
    loopEvidence: loop.loops,
  };
}

/**
 * An omitted feature: the regret finding is a warning or worse and some feature the variant does not
 * weight would, weighted alone, make the designer-optimal policy intent-optimal. Named on the regret
 * finding (message and `evidence.omittedFeatures`).
 */
function noteOmittedFeatures(findings: Finding[], sens: Finding[]): void {
  const regret = findings.find((f) => f.check === "regret");
  if (!regret || regret.severity === "info") return;
  const omitted = sens
    .map((f) => f.evidence as unknown as WeightInterval)
    .filter((w) => w.weight === 0 && !w.okAtCurrent && w.fixAt !== null)
    .map((w) => ({ feature: w.feature, fixAt: w.fixAt as number }));
  if (omitted.length === 0) return;
  regret.evidence.omittedFeatures = omitted;
  regret.message += `; omitted feature: ${omitted.map((o) => `${o.feature} is not weighted, and weighting it ${o.fixAt.toPrecision(3)} would make the designer-optimal policy intent-optimal`).join("; ")}`;
}

/** The audit document (exactly the JSON of `gapwatch audit --json`). */
export function runAudit(model: FiniteModel, variant: RewardVariant, opts: AuditOptions = {}): AuditReport {
  const { env, reward, findings, regret, regretNorm, loops } = runAuditDetailed(model, variant, opts);
  return { env, reward, findings, regret, regretNorm, loops };
}

/** Worst severity among findings, or null when there are none. */
export function worstSeverity(findings: readonly Finding[]): Severity | null {
  let w: Severity | null = null;
  for (const f of findings) if (w === null || SEVERITY_RANK[f.severity] > SEVERITY_RANK[w]) w = f.severity;
  return w;
}

/** Does any finding reach `level`? (`--fail-on`.) */
export function reaches(findings: readonly Finding[], level: Severity): boolean {
  return findings.some((f) => SEVERITY_RANK[f.severity] >= SEVERITY_RANK[level]);
}
