/**
 * `gapwatch train`: train a learner on the designer reward while the monitor watches intent.
 * Exit codes: 0 done, 2 bad input, 3 an alert fired and --fail-on-alert was given, 130 interrupted.
 */
import type { Command } from "commander";
import { resolve } from "node:path";
import { defaultLearner } from "../../../policies/index.js";
import { runPlanTask, runTrainCommand } from "../../app/train.js";
import { EXIT, InputError } from "../../errors.js";
import { parseRange } from "../../monitor/external.js";
import { sparklines } from "../../report/terminal.js";
import { parseSeed } from "../../rng/rng.js";
import type { EvaluationMode, RunResult } from "../../run/schema.js";
import type { Progress } from "../../train/run.js";
import { action, intOption, type CliContext } from "../context.js";
import { CAUTION, paint, table, emit, useColor, type CliIO } from "../io.js";
import { withInterrupt } from "../interrupt.js";
import { envOf, envOption, layoutOption, jsonOption, maxStatesOf, maxStatesOption, reportOf, reportOption, rewardOption, runsDirOf, runsDirOption } from "../options.js";
import { etaText, liveLine, progressBar } from "../progress.js";

/**
 * Alerts grouped by kind, in order of first firing: a detector re-fires each time its condition starts
 * to hold again (a greedy policy flipping between routes), so one line per kind with the steps and the
 * latest message reads better than the raw list (which stays in alerts.jsonl and the JSON output).
 */
export function alertsText(alerts: readonly { step: number; kind: string; message: string }[], color: boolean): string {
  const kinds = new Map<string, { steps: number[]; message: string }>();
  for (const a of alerts) {
    const k = kinds.get(a.kind) ?? { steps: [], message: a.message };
    k.steps.push(a.step);
    k.message = a.message;
    kinds.set(a.kind, k);
  }
  let t = `alerts (${alerts.length}):\n`;
  for (const [kind, k] of kinds) {
    const shown = k.steps.slice(0, 6).join(", ") + (k.steps.length > 6 ? `, ... (${k.steps.length - 6} more)` : "");
    t += `  ${paint(color, "red", kind)}  ${k.steps.length === 1 ? "at step" : `${k.steps.length}x, at steps`} ${shown}\n    ${k.message}\n`;
  }
  return t;
}

export function verdictColor(v: RunResult["verdict"]): "green" | "red" | "yellow" {
  return v === "aligned" ? "green" : v === "decoupled" ? "red" : "yellow";
}

/** Human summary of a run. Pure. */
export function trainText(r: RunResult, color: boolean): string {
  const f = r.final;
  const sp = sparklines(r);
  let t = `${paint(color, "bold", r.config.env)}  reward ${paint(color, "bold", r.config.reward)}  learner ${r.config.learner}  seed ${r.config.seed}  steps ${r.steps}  episodes ${r.episodes}\n`;
  t += `verdict: ${paint(color, verdictColor(r.verdict), r.verdict)}${r.status !== "complete" ? ` (${r.status})` : ""}\n  ${r.reason}\n\n`;
  if (f) {
    t += table(
      ["series", "checkpoints (normalized, 0 = random, 1 = optimal)", "final", "raw"],
      [
        ["designer", sp.designer, f.designerNorm.toFixed(2), f.designer.toFixed(4)],
        ["intent", sp.intent, f.intentNorm.toFixed(2), f.intent.toFixed(4)],
      ],
      { color },
    );
  }
  if (r.alerts.length > 0) t += `\n${alertsText(r.alerts, color)}`;
  else t += `\nno alerts\n`;
  t += `\nrun directory: ${r.runDir}\n${paint(color, "dim", CAUTION)}\n`;
  return t;
}

/** The run's progress bar with a live readout and an ETA, redrawn in place on a TTY stderr. */
export function progressReporter(io: CliIO, label: string, enabled = true): { update(p: Progress): void; done(): void } {
  const line = liveLine(io, enabled);
  const t0 = Date.now();
  let alerts = 0;
  return {
    update(p) {
      alerts += p.alerts.length;
      const pct = Math.round(Math.min(1, p.step / p.steps) * 100);
      line.draw(`${label} ${progressBar(p.step, p.steps)} ${String(pct).padStart(3)}%  designer ${p.record.designerNorm.toFixed(2)}  intent ${p.record.intentNorm.toFixed(2)}  alerts ${alerts}  ETA ${etaText(p.step, p.steps, Date.now() - t0)}`);
    },
    done: () => line.done(),
  };
}

export interface TrainCliOptions {
  env?: string;
  plan?: string;
  /** --index I (a string), or false with --no-index. */
  index?: string | false;
  reward?: string;
  learner?: string;
  steps?: string;
  seed?: string;
  checkpoints?: string;
  eval?: string;
  mcEpisodes?: string;
  designerRange?: string;
  intentRange?: string;
  runsDir?: string;
  maxStates?: string;
  failOnAlert?: boolean;
  json?: boolean;
  /** --report: true for the default `<runDir>/report.html`, or a file. */
  report?: boolean | string;
}

export function parseEvaluation(v: string | undefined): EvaluationMode | undefined {
  if (v === undefined) return undefined;
  if (v === "exact" || v === "mc" || v === "both") return v;
  throw new InputError("cli.eval", `--eval expects exact, mc or both, got "${v}"`, "--eval");
}

export function registerTrain(program: Command, ctx: CliContext): void {
  program
    .command("train")
    .description("train a learner on the designer reward while the monitor watches the held-out intent; verdict aligned / decoupled / inconclusive")
    .addOption(envOption().makeOptionMandatory(false))
    .addOption(layoutOption())
    .addOption(rewardOption())
    .option("--learner <learner>", `q-learning, sarsa, expected-sarsa, double-q, linear-sarsa (default ${defaultLearner})`)
    .option("--steps <n>", "environment steps (default: sized to the model, a few seconds at most)")
    .option("--seed <s>", "seed of every random stream (default 1)")
    .option("--checkpoints <k>", "number of checkpoints (default 20)")
    .option("--eval <mode>", "checkpoint scoring: exact, mc or both (default exact)")
    .option("--mc-episodes <n>", "rollouts per checkpoint with --eval mc|both (default 300)")
    .option("--designer-range <low:high>", "a module without a finite model (finite: false): designer score of a random policy : of an optimal one, for normalizing (default: the module's ranges)")
    .option("--intent-range <low:high>", "the same for the intent score")
    .addOption(runsDirOption())
    .option("--fail-on-alert", "exit 3 when any alert fired (for CI gating of reward changes)")
    .addOption(reportOption("the HTML report of the run", "<run-dir>/report.html"))
    .addOption(maxStatesOption())
    .option("--plan <file>", "run one run of a plan written by compare --plan (with --index; never writes the index)")
    .option("--index <i>", "which run of the plan (0-based; default $SLURM_ARRAY_TASK_ID, else $JOB_COMPLETION_INDEX)")
    .option("--no-index", "do not record the run in <runs-dir>/index.db (the file is not opened)")
    .addOption(jsonOption())
    .action(
      action(ctx, async (opts: TrainCliOptions) => {
        if (opts.plan !== undefined) {
          const text = (typeof opts.index === "string" ? opts.index : undefined) ?? ctx.io.env.SLURM_ARRAY_TASK_ID ?? ctx.io.env.JOB_COMPLETION_INDEX;
          if (text === undefined) throw new InputError("cli.missing", "train --plan needs --index I (or SLURM_ARRAY_TASK_ID / JOB_COMPLETION_INDEX)", "--index");
          const index = intOption(text, "--index", { min: 0 });
          const progress = progressReporter(ctx.io, `plan run ${index}`, !opts.json);
          const { value: out } = await withInterrupt((signal) =>
            runPlanTask({ plan: resolve(ctx.io.cwd, opts.plan as string), index, runsDir: runsDirOf(ctx.io, opts), signal, onProgress: (p) => progress.update(p) }).finally(() => progress.done()),
          );
          emit(ctx.io, Boolean(opts.json), out.doc, () => trainText(out.result, useColor(ctx.io)));
          return out.result.status === "interrupted" ? EXIT.interrupted : EXIT.ok;
        }
        if (!envOf(opts)) throw new InputError("cli.missing", "train needs --env (or --plan FILE --index I)", "--env");
        const input = {
          env: envOf(opts),
          reward: opts.reward,
          learner: opts.learner,
          steps: opts.steps === undefined ? undefined : intOption(opts.steps, "--steps"),
          seed: opts.seed === undefined ? undefined : parseSeed(opts.seed, "--seed"),
          checkpoints: opts.checkpoints === undefined ? undefined : intOption(opts.checkpoints, "--checkpoints"),
          evaluation: parseEvaluation(opts.eval),
          mcEpisodes: opts.mcEpisodes === undefined ? undefined : intOption(opts.mcEpisodes, "--mc-episodes", { min: 2 }),
          designerRange: opts.designerRange === undefined ? undefined : parseRange(opts.designerRange, "--designer-range"),
          intentRange: opts.intentRange === undefined ? undefined : parseRange(opts.intentRange, "--intent-range"),
        };
        const maxStates = maxStatesOf(opts);
        const progress = progressReporter(ctx.io, `${envOf(opts)} ${opts.reward ?? ""}`.trim(), !opts.json);
        const { value: out } = await withInterrupt((signal) =>
          runTrainCommand({ input, runsDir: runsDirOf(ctx.io, opts), noIndex: opts.index === false, report: reportOf(ctx.io, opts.report), maxStates, signal, onProgress: (p) => progress.update(p) }).finally(() => progress.done()),
        );
        const r = out.result;
        emit(ctx.io, Boolean(opts.json), out.doc, () => trainText(r, useColor(ctx.io)));
        if (out.report && !opts.json) ctx.io.err(`report: ${out.report}\n`);
        if (r.status === "interrupted") return EXIT.interrupted;
        if (opts.failOnAlert && r.alerts.length > 0) return EXIT.gate;
        return EXIT.ok;
      }),
    );
}
