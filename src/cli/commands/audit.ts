import type { Command } from "commander";
import { EXIT, InputError } from "../../errors.js";
import { loadEnv, resolveReward } from "../../model/registry.js";
import { drawStates } from "../../audit/draw.js";
import { reaches, runAuditDetailed, type AuditReport, type Severity } from "../../audit/run.js";
import { requireFinite } from "../../sim/finite.js";
import { action, numberOption, type CliContext } from "../context.js";
import { CAUTION, emit, paint, useColor, type CliIO } from "../io.js";
import { join, resolve } from "node:path";
import { AUDIT_FILE, dirKind } from "../../report/data.js";
import { commandLine, jsonBeside, renderAuditReport, standaloneFileName } from "../../report/standalone.js";
import { writeReportFile } from "../../report/write.js";
import { writeJsonAtomic } from "../../store/atomic.js";
import { packageVersion } from "../../util/paths.js";
import type { FiniteModel } from "../../model/types.js";

export interface AuditConfig {
  env: string;
  reward?: string;
  maxRisk?: number;
  sensitivity?: boolean;
}

export async function runAuditCommand(cfg: AuditConfig) {
  const loaded = await loadEnv(cfg.env);
  const model = requireFinite(loaded, "audit");
  const variant = resolveReward(model, cfg.reward);
  const result = runAuditDetailed(model, variant, { maxRisk: cfg.maxRisk, sensitivity: cfg.sensitivity });
  const doc: AuditReport = { env: result.env, reward: result.reward, findings: result.findings, regret: result.regret, regretNorm: result.regretNorm, loops: result.loops };
  return { model, result, doc };
}

export interface AuditOutputOptions {
  /** --report: true for `<runs-dir>/audit-<env>-<reward>.html`, or a file. */
  report?: boolean | string;
  /** --runs-dir: where the default report goes (default ./runs). */
  runsDir?: string;
  /** --run-dir: an existing run or comparison directory to drop audit.json into. */
  runDir?: string;
}

/** The checked `--run-dir` folder (a run or comparison directory), before any work is done. */
export function checkRunDir(io: CliIO, runDir: string | undefined): string | null {
  if (runDir === undefined) return null;
  const dir = resolve(io.cwd, runDir);
  dirKind(dir);
  return dir;
}

/**
 * The files `--report` / `--run-dir` ask for: `<run-dir>/audit.json`, and the standalone HTML report
 * with its JSON document beside it (same name, `.json`). Returns the paths written.
 */
export async function writeAuditOutputs(
  io: CliIO,
  opts: AuditOutputOptions,
  doc: AuditReport,
  model: FiniteModel,
  settings: Record<string, unknown>,
): Promise<{ report: string | null; documents: string[] }> {
  const documents: string[] = [];
  const runDir = checkRunDir(io, opts.runDir);
  if (runDir) {
    const file = join(runDir, AUDIT_FILE);
    writeJsonAtomic(file, doc);
    documents.push(file);
  }
  let report: string | null = null;
  if (opts.report) {
    const out = typeof opts.report === "string" ? resolve(io.cwd, opts.report) : join(resolve(io.cwd, opts.runsDir ?? "runs"), standaloneFileName("audit", doc.env, doc.reward));
    report = writeReportFile(out, await renderAuditReport({ audit: { ...doc }, model, settings, version: packageVersion() }));
    const json = jsonBeside(report);
    writeJsonAtomic(json, doc);
    documents.push(json);
  }
  return { report, documents };
}

const STYLE: Record<Severity, "red" | "yellow" | "dim"> = { critical: "red", warning: "yellow", info: "dim" };

export function registerAudit(program: Command, ctx: CliContext): void {
  program
    .command("audit")
    .description("static checks of a reward on the finite model: reward loops, shaping, regret, early exit, risk, weight sensitivity")
    .requiredOption("--env <env>", "built-in scenario name, model file (.json) or simulator module")
    .option("--reward <reward>", "reward variant name or reward file (default: the variant named default, else the first)")
    .option("--max-risk <p>", "largest tolerated failure probability of the designer-optimal route (default 0.01)")
    .option("--fail-on <severity>", "exit 3 when a finding of this severity or worse exists: critical or warning")
    .option("--no-sensitivity", "skip the weight-sensitivity check (several exact solves per feature)")
    .option("--report [file]", "also write a standalone HTML report and its audit JSON beside it (default <runs-dir>/audit-<env>-<reward>.html)")
    .option("--runs-dir <dir>", "where --report goes by default (default ./runs)")
    .option("--run-dir <dir>", "also write audit.json into this run or comparison directory, for gapwatch report")
    .option("--json", "print one JSON document")
    .action(
      action(ctx, async (opts: { env: string; reward?: string; maxRisk?: string; failOn?: string; sensitivity?: boolean; json?: boolean } & AuditOutputOptions) => {
        const maxRisk = opts.maxRisk === undefined ? undefined : numberOption(opts.maxRisk, "--max-risk", { min: 0, max: 1 });
        if (opts.failOn !== undefined && opts.failOn !== "critical" && opts.failOn !== "warning") {
          throw new InputError("cli.failOn", `--fail-on expects critical or warning, got "${opts.failOn}"`, "--fail-on");
        }
        checkRunDir(ctx.io, opts.runDir);
        const { model, result, doc } = await runAuditCommand({ env: opts.env, reward: opts.reward, maxRisk, sensitivity: opts.sensitivity });
        const args = ["gapwatch", "audit", "--env", opts.env, ...(opts.reward !== undefined ? ["--reward", opts.reward] : []), ...(opts.maxRisk !== undefined ? ["--max-risk", opts.maxRisk] : []), ...(opts.sensitivity === false ? ["--no-sensitivity"] : [])];
        const written = await writeAuditOutputs(ctx.io, opts, doc, model, {
          command: commandLine(args),
          "largest tolerated risk": maxRisk ?? "0.01 (default)",
          "weight sensitivity": opts.sensitivity === false ? "skipped" : "checked",
        });
        const extra = written.report || written.documents.length ? { ...(written.report ? { report: written.report } : {}), documents: written.documents } : {};
        emit(ctx.io, Boolean(opts.json), { ...doc, ...extra }, () => {
          const color = useColor(ctx.io);
          const count = (s: Severity) => result.findings.filter((f) => f.severity === s).length;
          let text = `${paint(color, "bold", doc.env)}  reward ${paint(color, "bold", doc.reward)}  ${count("critical")} critical, ${count("warning")} warning, ${count("info")} info\n\n`;
          for (const f of result.findings) {
            text += `${paint(color, STYLE[f.severity], f.severity.toUpperCase().padEnd(8))} ${paint(color, "bold", f.check)}: ${f.message}\n`;
            const pic = evidencePicture(model, f);
            if (pic && f.severity !== "info") text += pic.replace(/^/gm, "    ") + "\n";
          }
          text += `\nExact checks on the model. ${CAUTION}\n`;
          return text;
        });
        if (!opts.json) {
          if (written.report) ctx.io.err(`report: ${written.report}\n`);
          for (const d of written.documents) ctx.io.err(`audit document: ${d}\n`);
        }
        if (opts.failOn && reaches(result.findings, opts.failOn as Severity)) return EXIT.gate;
        return EXIT.ok;
      }),
    );
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
