import type { Command } from "commander";
import { loadEnv, resolveReward } from "../../model/registry.js";
import { pressureCurve, type PressureCurve } from "../../pressure/curve.js";
import { learnerCurve, type LearnerPoint } from "../../pressure/learners.js";
import { readReferenceFile } from "../../pressure/reference.js";
import { requireFinite } from "../../sim/finite.js";
import { action, intOption, type CliContext } from "../context.js";
import { emit, formatNumber, paint, sparkline, useColor } from "../io.js";
import { join, resolve } from "node:path";
import { PRESSURE_FILE } from "../../report/data.js";
import { commandLine, jsonBeside, renderPressureReport, standaloneFileName } from "../../report/standalone.js";
import { writeReportFile } from "../../report/write.js";
import { writeJsonAtomic } from "../../store/atomic.js";
import { packageVersion } from "../../util/paths.js";
import { checkRunDir, type AuditOutputOptions } from "./audit.js";

export interface PressureConfig {
  env: string;
  reward?: string;
  reference?: string;
  learners?: boolean;
  seed?: number;
}

export async function runPressure(cfg: PressureConfig): Promise<{ curve: PressureCurve; learners?: LearnerPoint[]; doc: Record<string, unknown>; env: string; reward: string }> {
  const loaded = await loadEnv(cfg.env);
  const model = requireFinite(loaded, "pressure");
  const variant = resolveReward(model, cfg.reward);
  const reference = cfg.reference ? readReferenceFile(model, cfg.reference) : undefined;
  const curve = pressureCurve(model, variant, { reference });
  const learners = cfg.learners ? learnerCurve(model, variant, { seed: cfg.seed ?? 1 }) : undefined;
  const doc: Record<string, unknown> = { points: curve.points, peak: curve.peak, onset: curve.onset };
  if (learners) doc.learners = learners;
  return { curve, learners, doc, env: model.name, reward: variant.name };
}

export function registerPressure(program: Command, ctx: CliContext): void {
  program
    .command("pressure")
    .description("designer return and intent of soft-optimal policies of increasing optimization strength (the Goodhart curve)")
    .requiredOption("--env <env>", "built-in scenario name, model file (.json) or simulator module")
    .option("--reward <reward>", "reward variant name or reward file (default: the variant named default, else the first)")
    .option("--reference <file>", "reference policy (JSON with a \"policy\" array, e.g. a train run's policy.json); default uniform random")
    .option("--learners", "also train tabular Q-learning at increasing step budgets and evaluate each greedy policy exactly")
    .option("--seed <n>", "seed for --learners (default 1)")
    .option("--report [file]", "also write a standalone HTML report and its pressure JSON beside it (default <runs-dir>/pressure-<env>-<reward>.html)")
    .option("--runs-dir <dir>", "where --report goes by default (default ./runs)")
    .option("--run-dir <dir>", "also write pressure.json into this run or comparison directory, for gapwatch report")
    .option("--json", "print one JSON document")
    .action(
      action(ctx, async (opts: { env: string; reward?: string; reference?: string; learners?: boolean; seed?: string; json?: boolean } & AuditOutputOptions) => {
        const seed = opts.seed === undefined ? undefined : intOption(opts.seed, "--seed", { min: 0 });
        const runDir = checkRunDir(ctx.io, opts.runDir);
        const { curve, learners, doc, env, reward } = await runPressure({ env: opts.env, reward: opts.reward, reference: opts.reference, learners: opts.learners, seed });
        // The files carry the environment and reward, so a report read later can name them.
        const fileDoc = { env, reward, ...doc };
        const documents: string[] = [];
        if (runDir) {
          writeJsonAtomic(join(runDir, PRESSURE_FILE), fileDoc);
          documents.push(join(runDir, PRESSURE_FILE));
        }
        let report: string | null = null;
        if (opts.report) {
          const out = typeof opts.report === "string" ? resolve(ctx.io.cwd, opts.report) : join(resolve(ctx.io.cwd, opts.runsDir ?? "runs"), standaloneFileName("pressure", env, reward));
          const args = ["gapwatch", "pressure", "--env", opts.env, ...(opts.reward !== undefined ? ["--reward", opts.reward] : []), ...(opts.reference !== undefined ? ["--reference", opts.reference] : []), ...(opts.learners ? ["--learners"] : []), ...(opts.seed !== undefined ? ["--seed", opts.seed] : [])];
          const settings = { command: commandLine(args), reference: opts.reference ?? "uniform random", ...(opts.learners ? { "learner seed": seed ?? 1 } : {}) };
          report = writeReportFile(out, await renderPressureReport({ pressure: fileDoc, settings, version: packageVersion() }));
          writeJsonAtomic(jsonBeside(report), fileDoc);
          documents.push(jsonBeside(report));
        }
        const extra = report || documents.length ? { ...(report ? { report } : {}), documents } : {};
        emit(ctx.io, Boolean(opts.json), { ...doc, ...extra }, () => {
          const color = useColor(ctx.io);
          const pts = curve.points;
          let text = `strength beta ${formatNumber(pts[0]?.strength ?? 0)} .. ${formatNumber(pts[pts.length - 1]?.strength ?? 0)} (${pts.length} soft-optimal policies, left = reference)\n`;
          text += `designer ${sparkline(pts.map((p) => p.designer))}  ${formatNumber(pts[0].designer)} -> ${formatNumber(pts[pts.length - 1].designer)}\n`;
          text += `intent   ${sparkline(pts.map((p) => p.intent))}  ${formatNumber(pts[0].intent)} -> ${formatNumber(pts[pts.length - 1].intent)}\n`;
          text += `KL       ${sparkline(pts.map((p) => p.kl))}  ${formatNumber(pts[0].kl)} -> ${formatNumber(pts[pts.length - 1].kl)}\n\n`;
          text += `peak intent ${formatNumber(curve.peak.intent)} at strength ${formatNumber(curve.peak.strength)}\n`;
          text +=
            curve.onset === null
              ? paint(color, "green", "no onset of over-optimization: intent does not fall while designer return rises") + "\n"
              : paint(color, "red", `over-optimization sets in after strength ${formatNumber(curve.onset)}: beyond it intent falls while designer return still rises`) + "\n";
          if (learners) {
            text += `\nQ-learning greedy policies by step budget:\n`;
            for (const l of learners) text += `  ${String(l.steps).padStart(8)} steps  designer ${formatNumber(l.designer)}  intent ${formatNumber(l.intent)}\n`;
          }
          return text;
        });
        if (!opts.json) {
          if (report) ctx.io.err(`report: ${report}\n`);
          for (const d of documents) ctx.io.err(`pressure document: ${d}\n`);
        }
      }),
    );
}
