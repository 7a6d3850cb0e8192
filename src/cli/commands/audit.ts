import type { Command } from "commander";
import { EXIT, InputError } from "../../errors.js";
import { loadEnv, resolveReward } from "../../model/registry.js";
import { drawStates } from "../../audit/draw.js";
import { reaches, runAuditDetailed, type AuditReport, type Severity } from "../../audit/run.js";
import { requireFinite } from "../../sim/finite.js";
import { action, numberOption, type CliContext } from "../context.js";
import { emit, paint, useColor } from "../io.js";

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
    .option("--json", "print one JSON document")
    .action(
      action(ctx, async (opts: { env: string; reward?: string; maxRisk?: string; failOn?: string; sensitivity?: boolean; json?: boolean }) => {
        const maxRisk = opts.maxRisk === undefined ? undefined : numberOption(opts.maxRisk, "--max-risk", { min: 0, max: 1 });
        if (opts.failOn !== undefined && opts.failOn !== "critical" && opts.failOn !== "warning") {
          throw new InputError("cli.failOn", `--fail-on expects critical or warning, got "${opts.failOn}"`, "--fail-on");
        }
        const { model, result, doc } = await runAuditCommand({ env: opts.env, reward: opts.reward, maxRisk, sensitivity: opts.sensitivity });
        emit(ctx.io, Boolean(opts.json), doc, () => {
          const color = useColor(ctx.io);
          const count = (s: Severity) => result.findings.filter((f) => f.severity === s).length;
          let text = `${paint(color, "bold", doc.env)}  reward ${paint(color, "bold", doc.reward)}  ${count("critical")} critical, ${count("warning")} warning, ${count("info")} info\n\n`;
          for (const f of result.findings) {
            text += `${paint(color, STYLE[f.severity], f.severity.toUpperCase().padEnd(8))} ${paint(color, "bold", f.check)}: ${f.message}\n`;
            const pic = evidencePicture(model, f);
            if (pic && f.severity !== "info") text += pic.replace(/^/gm, "    ") + "\n";
          }
          text += `\nExact checks on the model. A clean audit is evidence, not certification; for safety-relevant uses follow your domain's safety standards.\n`;
          return text;
        });
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
