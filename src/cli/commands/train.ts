/**
 * `gapwatch train`: train a learner on the designer reward while the monitor watches intent.
 * Exit codes: 0 done, 2 bad input, 3 an alert fired and --fail-on-alert was given, 130 interrupted.
 */
import type { Command } from "commander";
import { EXIT } from "../../errors.js";
import type { EvaluationMode, RunResult } from "../../run/schema.js";
import { runTraining, type Progress } from "../../train/run.js";
import { indexRun } from "../../store/index-db.js";
import { resolve } from "node:path";
import { action, intOption, type CliContext } from "../context.js";
import { emit, paint, sparkline, table, useColor, type CliIO } from "../io.js";
import { parseSeed } from "../../rng/rng.js";
import { InputError } from "../../errors.js";
import { writeReport } from "../../report/write.js";

export { CAUTION } from "../io.js";
import { CAUTION } from "../io.js";

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

/** The JSON document of `gapwatch train`. */
export function trainDocument(r: RunResult) {
  return {
    runDir: r.runDir,
    env: r.config.env,
    reward: r.config.reward,
    learner: r.config.learner,
    seed: r.config.seed,
    verdict: r.verdict,
    status: r.status,
    reason: r.reason,
    checkpoints: r.checkpoints.map((c) => ({ step: c.step, designer: c.designer, intent: c.intent, designerNorm: c.designerNorm, intentNorm: c.intentNorm })),
    alerts: r.alerts.map((a) => ({ step: a.step, kind: a.kind, message: a.message })),
  };
}

export function verdictColor(v: RunResult["verdict"]): "green" | "red" | "yellow" {
  return v === "aligned" ? "green" : v === "decoupled" ? "red" : "yellow";
}

/** Both normalized series on one shared scale (so their levels compare). */
export function sparklines(r: RunResult): { designer: string; intent: string } {
  const d = r.checkpoints.map((c) => c.designerNorm);
  const i = r.checkpoints.map((c) => c.intentNorm);
  const lo = Math.min(0, ...d, ...i);
  const hi = Math.max(1, ...d, ...i);
  return { designer: sparkline(d, [lo, hi]), intent: sparkline(i, [lo, hi]) };
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

/** A one-line progress bar with a live readout, redrawn in place on a TTY stderr. */
export function progressReporter(io: CliIO, label: string): { update(p: Progress): void; done(): void } {
  if (!io.stderrIsTTY) return { update() {}, done() {} };
  const width = 24;
  let alerts = 0;
  return {
    update(p) {
      alerts += p.alerts.length;
      const frac = Math.min(1, p.step / p.steps);
      const filled = Math.round(frac * width);
      const bar = "#".repeat(filled) + "-".repeat(width - filled);
      io.err(`\r${label} [${bar}] ${String(Math.round(frac * 100)).padStart(3)}%  designer ${p.record.designerNorm.toFixed(2)}  intent ${p.record.intentNorm.toFixed(2)}  alerts ${alerts}   `);
    },
    done() {
      io.err("\r\u001b[2K");
    },
  };
}

export interface TrainCliOptions {
  env: string;
  reward?: string;
  learner?: string;
  steps?: string;
  seed?: string;
  checkpoints?: string;
  eval?: string;
  mcEpisodes?: string;
  runsDir?: string;
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

/** SIGINT handler for the duration of a run: the first Ctrl-C stops training and stores what there is. */
export function withInterrupt<T>(fn: (signal: { aborted: boolean }) => Promise<T>): Promise<T> {
  const signal = { aborted: false };
  const onInt = () => {
    signal.aborted = true;
  };
  process.once("SIGINT", onInt);
  return fn(signal).finally(() => process.removeListener("SIGINT", onInt));
}

export function registerTrain(program: Command, ctx: CliContext): void {
  program
    .command("train")
    .description("train a learner on the designer reward while the monitor watches the held-out intent; verdict aligned / decoupled / inconclusive")
    .requiredOption("--env <env>", "built-in scenario name or model file (.json)")
    .option("--reward <reward>", "reward variant name or reward file (default: the variant named default, else the first)")
    .option("--learner <learner>", "q-learning, sarsa, expected-sarsa, double-q, linear-sarsa (default q-learning)")
    .option("--steps <n>", "environment steps (default: sized to the model, a few seconds at most)")
    .option("--seed <s>", "seed of every random stream (default 1)")
    .option("--checkpoints <k>", "number of checkpoints (default 20)")
    .option("--eval <mode>", "checkpoint scoring: exact, mc or both (default exact)")
    .option("--mc-episodes <n>", "rollouts per checkpoint with --eval mc|both (default 300)")
    .option("--runs-dir <dir>", "where run directories go (default ./runs)")
    .option("--fail-on-alert", "exit 3 when any alert fired (for CI gating of reward changes)")
    .option("--report [file]", "also write the HTML report of the run (default <run-dir>/report.html)")
    .option("--json", "print one JSON document")
    .action(
      action(ctx, async (opts: TrainCliOptions) => {
        const input = {
          env: opts.env,
          reward: opts.reward,
          learner: opts.learner,
          steps: opts.steps === undefined ? undefined : intOption(opts.steps, "--steps"),
          seed: opts.seed === undefined ? undefined : parseSeed(opts.seed, "--seed"),
          checkpoints: opts.checkpoints === undefined ? undefined : intOption(opts.checkpoints, "--checkpoints"),
          evaluation: parseEvaluation(opts.eval),
          mcEpisodes: opts.mcEpisodes === undefined ? undefined : intOption(opts.mcEpisodes, "--mc-episodes", { min: 2 }),
        };
        const runsDir = resolve(ctx.io.cwd, opts.runsDir ?? "runs");
        const progress = opts.json ? { update() {}, done() {} } : progressReporter(ctx.io, `${opts.env} ${opts.reward ?? ""}`.trim());
        const r = await withInterrupt((signal) => runTraining(input, { runsDir, signal, onProgress: (p) => progress.update(p) }).finally(() => progress.done()));
        indexRun(runsDir, r);
        const report = opts.report ? await writeReport(r.runDir, { out: typeof opts.report === "string" ? resolve(ctx.io.cwd, opts.report) : undefined }) : null;
        emit(ctx.io, Boolean(opts.json), report ? { ...trainDocument(r), report } : trainDocument(r), () => trainText(r, useColor(ctx.io)));
        if (report && !opts.json) ctx.io.err(`report: ${report}\n`);
        if (r.status === "interrupted") return EXIT.interrupted;
        if (opts.failOnAlert && r.alerts.length > 0) return EXIT.gate;
        return EXIT.ok;
      }),
    );
}
