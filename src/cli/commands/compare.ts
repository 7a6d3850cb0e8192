/**
 * `gapwatch compare`: every reward variant over the same seeds (and learners), locally on a thread
 * pool or on `gapwatch worker` processes through Redis; a ranking by intent IQM with bootstrap
 * intervals, alert rates, verdict counts and pairwise probabilities of improvement.
 * Exit codes: 0 done (failed runs are reported, not fatal), 2 bad input or every run failed.
 */
import type { Command } from "commander";
import { resolve } from "node:path";
import { defaultLearner } from "../../../policies/index.js";
import { collectCommand, runCompareCommand, writePlanCommand, type CollectGate } from "../../app/compare.js";
import type { PlanSweep } from "../../batch/sweep-plan.js";
import type { CompareResult } from "../../batch/compare.js";
import { MAX_SWEEP_RUNS, parseList, parseSeedList } from "../../batch/plan.js";
import { defaultWorkers } from "../../batch/pool.js";
import { EXIT, InputError, printableLine } from "../../errors.js";
import { BOOTSTRAP_DEFAULTS } from "../../stats/bootstrap.js";
import { parseLayoutRange } from "../../env/layout-spec.js";
import { action, intOption, type CliContext } from "../context.js";
import { CAUTION, emit, paint, table, useColor } from "../io.js";
import { envOf, envOption, layoutOption, layoutsOption, jsonOption, maxStatesOf, maxStatesOption, reportOf, reportOption, runsDirOf, runsDirOption } from "../options.js";
import { progressLine } from "../progress.js";

interface CompareCliOptions {
  env: string;
  layout?: string;
  layouts?: string;
  rewards: string;
  learners?: string;
  seeds?: string;
  seedList?: string;
  steps?: string;
  workers?: string;
  queue?: string;
  attempts?: string;
  runTimeout?: string;
  waitTimeout?: string;
  bootstrapSeed?: string;
  bootstrapReps?: string;
  runsDir?: string;
  maxStates?: string;
  csv?: string;
  json?: boolean;
  /** --report: true for the default `<comparison-dir>/report.html`, or a file. */
  report?: boolean | string;
  plan?: string;
  collect?: string;
  failOn?: string;
}

const GATES: readonly CollectGate[] = ["missing", "failed", "decoupled"];

function parseGates(text: string): CollectGate[] {
  return parseList(text, "--fail-on").map((g) => {
    const hit = GATES.find((k) => k === g);
    if (!hit) throw new InputError("cli.failOn", `--fail-on takes ${GATES.join(", ")}; got "${g}"`, "--fail-on");
    return hit;
  });
}

const f2 = (x: number | null) => (x === null ? "-" : x.toFixed(2));
const ci = (c: [number, number] | null) => (c === null ? "-" : `[${c[0].toFixed(2)}, ${c[1].toFixed(2)}]`);

/** The ranking table and pair lines. Pure. */
export function compareText(r: CompareResult, color: boolean): string {
  const s = r.stats;
  const byName = new Map(s.variants.map((v) => [v.reward, v]));
  let t = `${paint(color, "bold", s.env)}  ${r.doc.config.rewards.length} variants x ${r.doc.config.learners.length} learner(s) x ${r.doc.config.seeds.length} seeds  (${r.doc.config.backend})\n\n`;
  const rows = s.ranking.map((name, i) => {
    const v = byName.get(name)!;
    const verdicts = `${v.verdicts.aligned}/${v.verdicts.decoupled}/${v.verdicts.inconclusive}`;
    const alert = v.alertRate.p === null ? "-" : `${(100 * v.alertRate.p).toFixed(0)}% ${ci(v.alertRate.ci)}`;
    const gaming = v.verdicts.decoupled > 0 ? paint(color, "red", name) : paint(color, "green", name);
    return [String(i + 1), gaming, String(v.runs) + (v.failed ? ` (+${v.failed} failed)` : ""), f2(v.intent.iqm), ci(v.intent.ci), f2(v.intent.mean), f2(v.intent.median), f2(v.designer.iqm), ci(v.designer.ci), verdicts, alert];
  });
  t += table(["#", "reward", "runs", "intent IQM", "95% CI", "mean", "median of learner means", "designer IQM", "95% CI", "ali/dec/inc", "alert rate (Wilson 95%)"], rows, { color });
  if (s.pairs.length) {
    t += `\nprobability of improvement on intent, P(a > b), 95% bootstrap CI:\n`;
    for (const p of s.pairs) t += `  ${p.a} > ${p.b}: ${f2(p.probabilityOfImprovement)} ${ci(p.ci)}\n`;
  }
  if (s.failed.length) {
    t += `\n${paint(color, "red", `${s.failed.length} run(s) failed`)}:\n`;
    for (const f of s.failed.slice(0, 10)) t += `  ${f.reward} ${f.learner} seed ${f.seed}: ${f.code}: ${f.message}${f.where ? ` (${f.where})` : ""}\n`;
    if (s.failed.length > 10) t += `  ... ${s.failed.length - 10} more in comparison.json\n`;
  }
  t += `\nScores are final normalized scores (0 = uniform random, 1 = optimal); IQM = interquartile mean over all runs, CI = stratified bootstrap; mean and median are over the learners' mean scores (with one learner, the median is that learner's mean).\n${CAUTION}\n`;
  t += `comparison: ${r.dir}\n`;
  return t;
}

/** `--run-timeout <seconds>` (or another seconds flag) -> milliseconds (a positive number, fractions allowed, at most 2,000,000 s). */
export function runTimeoutMs(text: string, flag = "--run-timeout"): number {
  const s = Number(text);
  if (!/^\s*[0-9.eE+]+\s*$/.test(text) || !Number.isFinite(s) || s <= 0 || s > 2_000_000) {
    throw new InputError("cli.runTimeout", `${flag} needs a positive number of seconds (at most 2000000), got "${text}"`, flag);
  }
  return Math.round(s * 1000) || 1;
}

export function registerCompare(program: Command, ctx: CliContext): void {
  program
    .command("compare")
    .description("train every reward variant on the same seeds, locally or on many machines; rank by intent with bootstrap intervals")
    .addOption(envOption().makeOptionMandatory(false))
    .addOption(layoutOption())
    .option("--rewards <list>", "comma-separated reward variant names or reward files (required unless --collect)")
    .option("--learners <list>", `comma-separated learners (default ${defaultLearner})`)
    .option("--seeds <n>", "seeds 1..n (default 10)")
    .option("--seed-list <list>", "explicit seeds, e.g. 1,2,3 or 1-20")
    .addOption(layoutsOption("layouts of the env family as the paired rows instead of seeds (each variant on the same layouts; every run trains with --seed-list's one seed, default 1)"))
    .option("--steps <n>", "environment steps per run (default: the scenario's)")
    .option("--workers <w>", `local worker threads (default: cores, here ${defaultWorkers()})`)
    .option("--queue <url>", "run on `gapwatch worker` processes through Redis, e.g. redis://127.0.0.1:6379/0")
    .option("--attempts <n>", "attempts per job on the queue before it is reported failed (default 3)")
    .option("--run-timeout <seconds>", "stop a run that takes longer than this and report it failed (batch.timeout); default: no limit")
    .option("--wait-timeout <seconds>", "with --queue: report the unfinished runs failed (batch.waitTimeout) when no run has finished for this long; default: wait")
    .option("--bootstrap-seed <s>", "seed of the bootstrap resampling (default 0)")
    .option("--bootstrap-reps <n>", `bootstrap replicates (default ${BOOTSTRAP_DEFAULTS.reps})`)
    .addOption(runsDirOption())
    .option("--csv <file>", "also write the per-run CSV here")
    .addOption(reportOption("the HTML report of the comparison", "<comparison-dir>/report.html"))
    .addOption(maxStatesOption())
    .option("--plan <file>", "write the sweep's plan (every run's config and id) to this file and run nothing; with --collect: the plan to read")
    .option("--collect <dir>", "build the comparison from the finished run folders in DIR (a runs folder) for the plan (--plan, default DIR/plan.json)")
    .option("--fail-on <list>", "with --collect: exit 3 when any of missing, failed, decoupled occurs")
    .addOption(jsonOption())
    .action(
      action(ctx, async (opts: CompareCliOptions) => {
        if (opts.collect !== undefined) {
          const runsDir = resolve(ctx.io.cwd, opts.collect);
          const out = await collectCommand({
            runsDir,
            plan: resolve(ctx.io.cwd, opts.plan ?? resolve(runsDir, "plan.json")),
            failOn: opts.failOn === undefined ? [] : parseGates(opts.failOn),
            csv: opts.csv === undefined ? undefined : resolve(ctx.io.cwd, opts.csv),
            report: reportOf(ctx.io, opts.report),
          });
          emit(ctx.io, Boolean(opts.json), out.doc, () => compareText(out.result, useColor(ctx.io)));
          if (out.missing.length) ctx.io.err(`missing runs (by plan index): ${out.missing.join(",")}\n`);
          if (opts.json) ctx.io.err(`comparison: ${out.result.dir}\n`);
          return out.gate ? EXIT.gate : EXIT.ok;
        }
        if (opts.failOn !== undefined) throw new InputError("cli.conflict", "--fail-on goes with --collect", "--fail-on");
        if (!envOf(opts)) throw new InputError("cli.missing", "compare needs --env (or --collect DIR)", "--env");
        if (!opts.rewards) throw new InputError("cli.missing", "compare needs --rewards (or --collect DIR)", "--rewards");
        if (opts.seeds !== undefined && opts.seedList !== undefined) throw new InputError("cli.conflict", "give --seeds or --seed-list, not both", "--seed-list");
        let seeds = opts.seedList !== undefined ? parseSeedList(opts.seedList) : Array.from({ length: intOption(opts.seeds, "--seeds", { def: 10, max: MAX_SWEEP_RUNS }) }, (_, i) => i + 1);
        let layoutSeed: number | undefined;
        if (opts.layouts !== undefined) {
          if (opts.layout !== undefined) throw new InputError("cli.conflict", "give --layout or --layouts, not both", "--layouts");
          if (opts.seeds !== undefined || (opts.seedList !== undefined && seeds.length !== 1)) throw new InputError("cli.conflict", "with --layouts the rows are layouts: give at most one seed (--seed-list N)", "--layouts");
          layoutSeed = opts.seedList !== undefined ? seeds[0] : 1;
          seeds = parseLayoutRange(opts.layouts);
        }
        if (opts.plan !== undefined && opts.queue !== undefined) throw new InputError("cli.conflict", "give --plan or --queue, not both", "--plan");
        // The sweep itself (what a plan file records); the local or queued run adds where and how it runs.
        const sweep: PlanSweep = {
          env: envOf(opts),
          rewards: parseList(opts.rewards, "--rewards"),
          learners: opts.learners ? parseList(opts.learners, "--learners") : [defaultLearner],
          seeds,
          layoutSeed,
          steps: opts.steps === undefined ? undefined : intOption(opts.steps, "--steps"),
          bootstrapSeed: intOption(opts.bootstrapSeed, "--bootstrap-seed", { min: 0, def: 0 }),
          reps: intOption(opts.bootstrapReps, "--bootstrap-reps", { def: BOOTSTRAP_DEFAULTS.reps }),
          maxStates: maxStatesOf(opts),
        };
        if (opts.plan !== undefined) {
          const file = resolve(ctx.io.cwd, opts.plan);
          const { plan, doc } = await writePlanCommand(sweep, file);
          emit(ctx.io, Boolean(opts.json), doc, () => `plan ${plan.id}: ${plan.runs.length} runs (indices 0..${plan.runs.length - 1}) written to ${file}\n`);
          return EXIT.ok;
        }
        const showBar = ctx.io.stderrIsTTY && !opts.json;
        const t0 = Date.now();
        const { result, report, doc } = await runCompareCommand(
          {
            ...sweep,
            runsDir: runsDirOf(ctx.io, opts),
            workers: intOption(opts.workers, "--workers", { def: defaultWorkers() }),
            queue: opts.queue,
            attempts: opts.attempts === undefined ? undefined : intOption(opts.attempts, "--attempts"),
            runTimeoutMs: opts.runTimeout === undefined ? undefined : runTimeoutMs(opts.runTimeout),
            waitTimeoutMs: opts.waitTimeout === undefined ? undefined : runTimeoutMs(opts.waitTimeout, "--wait-timeout"),
            csv: opts.csv === undefined ? undefined : resolve(ctx.io.cwd, opts.csv),
            report: reportOf(ctx.io, opts.report),
          },
          {
            onNotice: (line) => ctx.io.err(`${showBar ? "\n" : ""}${printableLine(line)}\n`),
            onProgress: (p) => {
              if (showBar) ctx.io.err(`\r${progressLine(p.done, p.total, p.failed, Date.now() - t0)}${p.done === p.total ? "\n" : ""}`);
            },
          },
        );
        emit(ctx.io, Boolean(opts.json), doc, () => compareText(result, useColor(ctx.io)));
        if (opts.json) ctx.io.err(`comparison: ${result.dir}\n`);
        else if (report) ctx.io.err(`report: ${report}\n`);
        return EXIT.ok;
      }),
    );
}
