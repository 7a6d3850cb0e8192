/**
 * Standalone reports of the two commands that have no run directory: `gapwatch audit` (static checks
 * solved exactly on the model) and `gapwatch pressure` (the designer / intent curve over optimization
 * strength). Same page shell, sections, caution and styles as the run and comparison reports; a
 * summary band at the top in place of the training verdict (an audit has findings, not a verdict).
 * Pure: documents in, one HTML string out.
 */
import type { FiniteModel } from "../model/types.js";
import { renderAuditSection } from "./audit.js";
import { strengthOf, type AuditDoc, type PressureDoc } from "./data.js";
import { esc } from "./escape.js";
import { page } from "./page.js";
import { renderPressureSection } from "./pressure.js";
import { caution, facts, footer, kvTable, num, regretPct, sectionOpen } from "./sections.js";

export interface StandaloneCommon {
  /** How the document was produced (flag -> value), shown in the reproduce section. */
  settings?: Record<string, unknown>;
  /** gapwatch version for the footer. */
  version?: string;
  /** Fixed time stamp for the footer (default: now). */
  generatedAt?: string;
}

export interface AuditReportInput extends StandaloneCommon {
  audit: AuditDoc;
  /** A pressure document of the same reward, added as a section when given. */
  pressure?: PressureDoc | null;
  /** The environment's model, for drawing the evidence on its map or track (null: no drawing). */
  model?: FiniteModel | null;
}

export interface PressureReportInput extends StandaloneCommon {
  pressure: PressureDoc;
  /** An audit document of the same reward, added as a section when given. */
  audit?: AuditDoc | null;
  model?: FiniteModel | null;
}

/** The summary band: same markup and colours as the verdict band (`cls` is one of its colour classes). */
function band(cls: "decoupled" | "inconclusive" | "aligned", word: string, meaning: string, reason: string, attr: string): string {
  return `<div class="verdict ${cls}" ${attr} role="status">
<div class="word">${esc(word)}</div>
<div class="reason"><span class="glyph">${esc(meaning)}</span><br>${esc(reason)}</div>
</div>`;
}

function settingsSection(n: number, command: string, settings: Record<string, unknown> | undefined, note: string): string {
  const rows = { command, ...(settings ?? {}) };
  return `${sectionOpen(n, "Reproduce this result", "manifest")}${kvTable(rows)}<p>${esc(note)}</p></section>`;
}

type Finding = NonNullable<AuditDoc["findings"]>[number];

/** Worst severity among findings: critical, warning, info, or null for none. */
export function worstOf(findings: readonly Finding[]): "critical" | "warning" | "info" | null {
  for (const s of ["critical", "warning", "info"] as const) if (findings.some((f) => f.severity === s)) return s;
  return null;
}

function auditBand(audit: AuditDoc): string {
  const findings = audit.findings ?? [];
  const worst = worstOf(findings);
  const count = (s: string) => findings.filter((f) => f.severity === s).length;
  const summary = `${count("critical")} critical, ${count("warning")} warning, ${count("info")} info`;
  const lead = findings.find((f) => f.severity === worst);
  if (worst === "critical" || worst === "warning") {
    return band(
      worst === "critical" ? "decoupled" : "inconclusive",
      worst === "critical" ? "critical" : "warning",
      worst === "critical" ? "the exact solution of this reward shows it can be gamed" : "the exact solution of this reward shows a weakness worth a look",
      `${summary}. ${lead ? `${lead.check}: ${lead.message}` : ""}`,
      `data-audit-summary="${esc(worst)}"`,
    );
  }
  return band("aligned", "no warnings", "no static check flagged this reward on this model", `${summary}. Training can still reveal problems the static checks cannot see.`, `data-audit-summary="clean"`);
}

/** The standalone HTML report of an audit document (audit.json from `gapwatch audit`). */
export async function renderAuditReport(input: AuditReportInput): Promise<string> {
  const { audit } = input;
  const env = audit.env ?? "environment";
  const reward = audit.reward ?? "reward";
  const findings = audit.findings ?? [];
  const generatedAt = input.generatedAt ?? new Date().toISOString();
  let n = 0;
  const parts: string[] = [];
  parts.push(`<header><div class="brand">gapwatch · reward audit</div><h1>${esc(reward)} <span style="font-weight:400;color:var(--muted)">on</span> ${esc(env)}</h1>
<p class="sub">Static checks on the finite model, solved exactly (no learner was trained)</p></header>`);
  parts.push(auditBand(audit));
  const count = (s: string) => String(findings.filter((f) => f.severity === s).length);
  parts.push(
    facts([
      { value: count("critical"), label: "critical" },
      { value: count("warning"), label: "warning" },
      { value: count("info"), label: "info" },
      { value: typeof audit.regretNorm === "number" ? regretPct(audit.regretNorm, 1) : "–", label: "intent given up by the designer-optimal policy" },
      { value: String((audit.loops ?? []).length), label: "reward loops" },
    ]),
  );
  parts.push(`${sectionOpen(++n, "Audit findings", "audit")}${renderAuditSection(audit, input.model ?? null)}</section>`);
  if (input.pressure) parts.push(`${sectionOpen(++n, "Optimization pressure", "pressure")}${await renderPressureSection(input.pressure)}</section>`);
  parts.push(settingsSection(++n, "gapwatch audit", { env, reward, ...input.settings }, "The audit is deterministic: the same model, reward and settings give the same findings."));
  parts.push(caution("static"));
  parts.push(footer(input.version, generatedAt));
  return page({
    title: `gapwatch · audit of ${reward} on ${env} · ${worstOf(findings) ?? "no findings"}`,
    body: parts.join("\n"),
    data: {
      format: "gapwatch-report-data/1",
      kind: "audit",
      env,
      reward,
      worst: worstOf(findings),
      regretNorm: audit.regretNorm ?? null,
      findings: findings.map((f) => ({ check: f.check, severity: f.severity, message: f.message })),
    },
  });
}

function pressureBand(p: PressureDoc): string {
  const onset = strengthOf(p.onset);
  const peak = strengthOf(p.peak);
  const peakIntent = p.peak && typeof p.peak === "object" ? (p.peak as { intent?: unknown }).intent : undefined;
  const peakText = peak !== null ? `Intent peaks${typeof peakIntent === "number" ? ` at ${num(peakIntent, 4)}` : ""} at strength ${num(peak, 3)}.` : "No intent peak was reported.";
  if (onset !== null) {
    return band(
      "decoupled",
      "over-optimized",
      "past some strength, optimizing the designer reward harder costs the intended outcome",
      `Over-optimization sets in after strength ${num(onset, 3)}: beyond it intent falls while designer return still rises. ${peakText}`,
      `data-pressure-summary="onset"`,
    );
  }
  return band(
    "aligned",
    "no onset",
    "intent did not fall while designer return rose, in the range of strengths tried",
    `${peakText} A stronger optimizer than the range tried, or a learner with a different bias, may still find a way to game the reward.`,
    `data-pressure-summary="none"`,
  );
}

/** The standalone HTML report of a pressure document (pressure.json from `gapwatch pressure`). */
export async function renderPressureReport(input: PressureReportInput): Promise<string> {
  const { pressure } = input;
  const env = pressure.env ?? input.audit?.env ?? "environment";
  const reward = pressure.reward ?? input.audit?.reward ?? "reward";
  const points = (pressure.points ?? []).filter((p) => p && typeof p.strength === "number");
  const generatedAt = input.generatedAt ?? new Date().toISOString();
  const peak = strengthOf(pressure.peak);
  const onset = strengthOf(pressure.onset);
  let n = 0;
  const parts: string[] = [];
  parts.push(`<header><div class="brand">gapwatch · optimization pressure</div><h1>${esc(reward)} <span style="font-weight:400;color:var(--muted)">on</span> ${esc(env)}</h1>
<p class="sub">Soft-optimal policies of increasing strength toward the designer reward, each scored exactly on the designer reward and on the held-out intent</p></header>`);
  parts.push(pressureBand(pressure));
  const last = points[points.length - 1];
  parts.push(
    facts([
      { value: peak !== null ? num(peak, 3) : "–", label: "strength at the intent peak" },
      { value: onset !== null ? num(onset, 3) : "none", label: "onset of over-optimization" },
      { value: String(points.length), label: "policies scored" },
      { value: last ? num(last.kl, 3) : "–", label: "KL from the reference at the strongest" },
    ]),
  );
  parts.push(`${sectionOpen(++n, "Designer return and intent as optimization pressure grows", "pressure")}${await renderPressureSection(pressure)}</section>`);
  const learners = Array.isArray(pressure.learners) ? (pressure.learners as { steps?: unknown; designer?: unknown; intent?: unknown }[]) : [];
  if (learners.length) {
    const rows = learners
      .map((l) => `<tr><td class="num">${esc(num(l.steps))}</td><td class="num">${esc(num(l.designer, 4))}</td><td class="num">${esc(num(l.intent, 4))}</td></tr>`)
      .join("");
    parts.push(
      `${sectionOpen(++n, "Q-learning at increasing step budgets", "learners")}<p>Greedy policies of tabular Q-learning trained on the designer reward for each step budget, each evaluated exactly.</p><table class="data"><thead><tr><th class="num">steps</th><th class="num">designer</th><th class="num">intent</th></tr></thead><tbody>${rows}</tbody></table></section>`,
    );
  }
  if (input.audit) parts.push(`${sectionOpen(++n, "Audit findings", "audit")}${renderAuditSection(input.audit, input.model ?? null)}</section>`);
  parts.push(settingsSection(++n, "gapwatch pressure", { env, reward, ...input.settings }, "The curve is computed exactly from the model; only --learners involves training, seeded by --seed."));
  parts.push(caution("static"));
  parts.push(footer(input.version, generatedAt));
  return page({
    title: `gapwatch · pressure on ${reward} on ${env}`,
    body: parts.join("\n"),
    data: { format: "gapwatch-report-data/1", kind: "pressure", env, reward, peak: pressure.peak ?? null, onset: pressure.onset ?? null, points },
  });
}

/** A file-name-safe form of an environment or reward name (paths keep their last part, without .json). */
export function fileSlug(name: string): string {
  const last = name.split(/[\\/]/).filter(Boolean).pop() ?? name;
  return last.replace(/\.(json|[cm]?[jt]s)$/i, "").replace(/[^A-Za-z0-9_.-]+/g, "-").replace(/^[-.]+|-+$/g, "").slice(0, 80) || "x";
}

/** The default file name of a standalone report: `audit-<env>-<reward>.html` / `pressure-<env>-<reward>.html`. */
export function standaloneFileName(kind: "audit" | "pressure", env: string, reward: string): string {
  return `${kind}-${fileSlug(env)}-${fileSlug(reward)}.html`;
}

/** The JSON document beside a standalone report: `x.html` -> `x.json` (other names get `.json` appended). */
export function jsonBeside(htmlFile: string): string {
  return /\.html?$/i.test(htmlFile) ? htmlFile.replace(/\.html?$/i, ".json") : `${htmlFile}.json`;
}

/** A command line for the reproduce section: arguments with spaces or shell characters single-quoted. */
export function commandLine(args: readonly string[]): string {
  return args.map((a) => (/^[A-Za-z0-9_@%+=:,./-]+$/.test(a) ? a : `'${a.replace(/'/g, `'\\''`)}'`)).join(" ");
}
