import type { Command } from "commander";
import { runAuditCommand } from "../../app/audit.js";
import { runAuditLayouts } from "../../app/audit-layouts.js";
import { parseLayoutRange } from "../../env/layout-spec.js";
import { checkRunDir } from "../../app/outputs.js";
import { drawStates } from "../../audit/draw.js";
import { reaches, type AuditReport, type Severity } from "../../audit/run.js";
import { EXIT, InputError } from "../../errors.js";
import { commandLine } from "../../report/standalone.js";
import { STATIC_CAUTION } from "../caution.js";
import { action, numberOption, type CliContext } from "../context.js";
import { emit, paint, useColor } from "../io.js";
import { envOf, envOption, layoutOption, layoutsOption, jsonOption, maxStatesOf, maxStatesOption, reportOf, reportOption, rewardOption, runsDirOf, runsDirOption } from "../options.js";
import { resolve } from "node:path";

/** The file options `audit` and `pressure` share, as given on the command line. */
export interface DocumentOutputFlags {
  report?: boolean | string;
  runsDir?: string;
  runDir?: string;
}

/** The file options resolved against the working directory; `--run-dir` is checked before any work. */
export function documentOutputs(ctx: CliContext, opts: DocumentOutputFlags) {
  const runDir = opts.runDir === undefined ? undefined : resolve(ctx.io.cwd, opts.runDir);
  checkRunDir(runDir);
  return { report: reportOf(ctx.io, opts.report), runsDir: runsDirOf(ctx.io, opts), runDir };
}

/** Print the files written (human output only). */
export function printWritten(ctx: CliContext, kind: string, written: { report: string | null; documents: string[] }): void {
  if (written.report) ctx.io.err(`report: ${written.report}\n`);
  for (const d of written.documents) ctx.io.err(`${kind} document: ${d}\n`);
}

const STYLE: Record<Severity, "red" | "yellow" | "dim"> = { critical: "red", warning: "yellow", info: "dim" };

export function registerAudit(program: Command, ctx: CliContext): void {
  program
    .command("audit")
    .description("static checks of a reward on the finite model: reward loops, shaping, regret, early exit, risk, weight sensitivity")
    .addOption(envOption())
    .addOption(layoutOption())
    .addOption(layoutsOption("audit each of these layouts of the family and summarize (how many critical, the worst)"))
    .addOption(rewardOption())
    .option("--max-risk <p>", "largest tolerated failure probability of the designer-optimal route (default 0.01)")
    .option("--fail-on <severity>", "exit 3 when a finding of this severity or worse exists: critical or warning")
    .option("--no-sensitivity", "skip the weight-sensitivity check (several exact solves per feature)")
    .addOption(reportOption("a standalone HTML report and its audit JSON beside it", "<runs-dir>/audit-<env>-<reward>.html"))
    .addOption(runsDirOption("where --report goes by default"))
    .option("--run-dir <dir>", "also write audit.json into this run or comparison directory, for gapwatch report")
    .addOption(maxStatesOption())
    .addOption(jsonOption())
    .action(
      action(ctx, async (opts: { env: string; layout?: string; layouts?: string; reward?: string; maxRisk?: string; failOn?: string; sensitivity?: boolean; maxStates?: string; json?: boolean } & DocumentOutputFlags) => {
        const maxRisk = opts.maxRisk === undefined ? undefined : numberOption(opts.maxRisk, "--max-risk", { min: 0, max: 1 });
        if (opts.failOn !== undefined && opts.failOn !== "critical" && opts.failOn !== "warning") {
          throw new InputError("cli.failOn", `--fail-on expects critical or warning, got "${opts.failOn}"`, "--fail-on");
        }
        if (opts.layouts !== undefined) return auditLayouts(ctx, opts, maxRisk);
        const outputs = documentOutputs(ctx, opts);
        const args = ["gapwatch", "audit", "--env", envOf(opts), ...(opts.reward !== undefined ? ["--reward", opts.reward] : []), ...(opts.maxRisk !== undefined ? ["--max-risk", opts.maxRisk] : []), ...(opts.sensitivity === false ? ["--no-sensitivity"] : [])];
        const { model, result, audit, written, doc } = await runAuditCommand({
          env: envOf(opts),
          reward: opts.reward,
          maxRisk,
          sensitivity: opts.sensitivity,
          maxStates: maxStatesOf(opts),
          command: commandLine(args),
          ...outputs,
        });
        emit(ctx.io, Boolean(opts.json), doc, () => {
          const color = useColor(ctx.io);
          const count = (s: Severity) => result.findings.filter((f) => f.severity === s).length;
          let text = `${paint(color, "bold", audit.env)}  reward ${paint(color, "bold", audit.reward)}  ${count("critical")} critical, ${count("warning")} warning, ${count("info")} info\n\n`;
          for (const f of result.findings) {
            text += `${paint(color, STYLE[f.severity], f.severity.toUpperCase().padEnd(8))} ${paint(color, "bold", f.check)}: ${f.message}\n`;
            const pic = f.check === "regret" ? regretPicture(model, f) : evidencePicture(model, f);
            if (pic && f.severity !== "info") text += pic.replace(/^/gm, "    ") + "\n";
          }
          text += `\nExact checks on the model. ${STATIC_CAUTION}\n`;
          return text;
        });
        if (!opts.json) printWritten(ctx, "audit", written);
        if (opts.failOn && reaches(result.findings, opts.failOn as Severity)) return EXIT.gate;
        return EXIT.ok;
      }),
    );
}

/** Lay the marks of several pictures of one map over each other (later layers win); null without a layout. */
function overlay(model: Parameters<typeof drawStates>[0], layers: [readonly number[], string][]): string | null {
  const base = drawStates(model, []);
  if (base === null) return null;
  const out = [...base];
  for (const [states, mark] of layers) {
    const pic = drawStates(model, states, mark);
    // Start, goal, item and tag glyphs stay visible under the marks.
    if (pic) [...pic].forEach((ch, i) => ch !== base[i] && i < out.length && !/[@1-9*+?]/.test(base[i]) && (out[i] = ch));
  }
  return out.join("");
}

/**
 * The regret picture: the designer-optimal route up to where it first departs from the intended
 * behaviour (~), and the cells where it gives up intent that the intended route does not (x), with a
 * legend line.
 */
function regretPicture(model: Parameters<typeof drawStates>[0], f: AuditReport["findings"][number]): string | null {
  const ev = f.evidence as Record<string, unknown>;
  const div = ev.firstDivergence as { pathStates?: number[] } | undefined;
  const given = (ev.givenUp as { stateIds?: number[] } | undefined)?.stateIds ?? [];
  const pic = overlay(model, [[div?.pathStates ?? [], "~"], [given, "x"]]);
  if (pic === null || (given.length === 0 && !div?.pathStates)) return pic === null ? null : evidencePicture(model, f);
  const legend = [div?.pathStates ? "~ the designer-optimal route until it first departs" : "", given.length ? "x where it gives up intent the intended route keeps" : ""].filter(Boolean).join("; ");
  return `${pic}${legend}\n`;
}

/** The map picture of a finding's evidence: a loop's cells, the risky route, the divergence path. */
function evidencePicture(model: Parameters<typeof drawStates>[0], f: AuditReport["findings"][number]): string | null {
  const ev = f.evidence as Record<string, unknown>;
  const loop = ev.loop as { stateIds?: number[] } | undefined;
  if (loop?.stateIds) return drawStates(model, loop.stateIds, "o");
  if (Array.isArray(ev.riskyRoute)) return drawStates(model, ev.riskyRoute as number[], "x");
  const div = ev.firstDivergence as { pathStates?: number[] } | undefined;
  if (div?.pathStates) return drawStates(model, div.pathStates, "x");
  return null;
}

/** `audit --layouts A-B`: one line per layout, the summary, the worst layout's findings. */
async function auditLayouts(
  ctx: CliContext,
  opts: { env: string; layout?: string; layouts?: string; reward?: string; failOn?: string; sensitivity?: boolean; maxStates?: string; json?: boolean; report?: boolean | string; runDir?: string },
  maxRisk: number | undefined,
): Promise<number> {
  if (opts.layout !== undefined) throw new InputError("cli.conflict", "give --layout or --layouts, not both", "--layouts");
  if (opts.report !== undefined || opts.runDir !== undefined) throw new InputError("cli.conflict", "--report and --run-dir audit one layout; drop them with --layouts", "--layouts");
  const { doc, findings } = await runAuditLayouts({ env: opts.env, reward: opts.reward, layouts: parseLayoutRange(opts.layouts as string), maxRisk, sensitivity: opts.sensitivity, maxStates: maxStatesOf(opts) });
  emit(ctx.io, Boolean(opts.json), doc, () => {
    const color = useColor(ctx.io);
    let text = `${paint(color, "bold", doc.env)}  reward ${paint(color, "bold", doc.reward)}  ${doc.layouts.length} layouts: ${doc.critical} with a critical finding, ${doc.warning} with a warning\n\n`;
    for (const r of doc.perLayout) {
      const sev = r.critical ? paint(color, "red", "CRITICAL") : r.warning ? paint(color, "yellow", "warning ") : paint(color, "dim", "ok      ");
      text += `layout ${String(r.layout).padStart(5)}  ${sev}  regretNorm ${r.regretNorm.toFixed(3)}${r.checks.length ? `  ${r.checks.join(", ")}` : ""}\n`;
    }
    if (doc.worst && doc.worst.findings.length) {
      text += `\nworst: layout ${doc.worst.layout}\n`;
      for (const f of doc.worst.findings) text += `  ${paint(color, STYLE[f.severity], f.severity.toUpperCase().padEnd(8))} ${paint(color, "bold", f.check)}: ${f.message}\n`;
    }
    text += `\nExact checks on every layout. ${STATIC_CAUTION}\n`;
    return text;
  });
  const gate = opts.failOn as Severity | undefined;
  return gate && reaches(findings, gate) ? EXIT.gate : EXIT.ok;
}
