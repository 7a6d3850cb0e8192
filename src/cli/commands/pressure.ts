import type { Command } from "commander";
import { loadEnv, resolveReward } from "../../model/registry.js";
import { pressureCurve, type PressureCurve } from "../../pressure/curve.js";
import { learnerCurve, type LearnerPoint } from "../../pressure/learners.js";
import { readReferenceFile } from "../../pressure/reference.js";
import { requireFinite } from "../../sim/finite.js";
import { action, intOption, type CliContext } from "../context.js";
import { emit, formatNumber, paint, sparkline, useColor } from "../io.js";

export interface PressureConfig {
  env: string;
  reward?: string;
  reference?: string;
  learners?: boolean;
  seed?: number;
}

export async function runPressure(cfg: PressureConfig): Promise<{ curve: PressureCurve; learners?: LearnerPoint[]; doc: Record<string, unknown> }> {
  const loaded = await loadEnv(cfg.env);
  const model = requireFinite(loaded, "pressure");
  const variant = resolveReward(model, cfg.reward);
  const reference = cfg.reference ? readReferenceFile(model, cfg.reference) : undefined;
  const curve = pressureCurve(model, variant, { reference });
  const learners = cfg.learners ? learnerCurve(model, variant, { seed: cfg.seed ?? 1 }) : undefined;
  const doc: Record<string, unknown> = { points: curve.points, peak: curve.peak, onset: curve.onset };
  if (learners) doc.learners = learners;
  return { curve, learners, doc };
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
    .option("--json", "print one JSON document")
    .action(
      action(ctx, async (opts: { env: string; reward?: string; reference?: string; learners?: boolean; seed?: string; json?: boolean }) => {
        const seed = opts.seed === undefined ? undefined : intOption(opts.seed, "--seed", { min: 0 });
        const { curve, learners, doc } = await runPressure({ env: opts.env, reward: opts.reward, reference: opts.reference, learners: opts.learners, seed });
        emit(ctx.io, Boolean(opts.json), doc, () => {
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
      }),
    );
}
