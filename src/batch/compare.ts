/**
 * `gapwatch compare` as a function: plan the sweep, run it on the local thread pool or through Redis,
 * store and index every run, aggregate, and write the comparison directory
 * `<runsDir>/compare-<hash>/` with comparison.json (the statistics document + the resolved config +
 * the run directories) and comparison.csv (one row per run). The hash covers the resolved sweep
 * config (env, rewards, learners, seeds, steps, bootstrap seed and replicates) and the job ids, so the
 * same sweep always lands in the same folder.
 *
 * Both backends produce the same run directories (same run ids, same checkpoints.jsonl bytes) and
 * the same statistics: a run depends only on its config, and the aggregation only on the runs.
 */
import { existsSync, mkdirSync } from "node:fs";
import { basename, join, resolve } from "node:path";
import { InputError } from "../errors.js";
import { canonicalJson } from "../util/canonical-json.js";
import { COMPARISON_FILE, openIndex } from "../store/index-db.js";
import { writeFileAtomic, writeJsonAtomic } from "../store/atomic.js";
import type { RunResult } from "../run/schema.js";
import { BOOTSTRAP_DEFAULTS } from "../stats/bootstrap.js";
import { getLearner } from "../train/learners.js";
import { resolveTrainConfig } from "../train/run.js";
import { aggregateComparison, comparisonCsv, type ComparisonStats, type RunRecord } from "./aggregate.js";
import { failureOf, writeShippedRun } from "./execute.js";
import { planSweep, sha256, type SweepSpec } from "./plan.js";
import { defaultWorkers, PoolError, WorkerPool, type PoolRunOptions } from "./pool.js";
import type { BatchJob, BatchProgress, RunOutcome } from "./types.js";
import { isModuleSpec, unknownVariant } from "../env/index.js";
import { MODULE_LOAD_TIMEOUT_MS, moduleVariantNamesWithin } from "./variant-names.js";

export interface CompareConfig extends SweepSpec {
  runsDir: string;
  /** Local thread pool size (default os.availableParallelism()). Ignored with `queue`. */
  workers?: number;
  /** redis://host:port/db: run the jobs on `gapwatch worker` processes instead. */
  queue?: string;
  bootstrapSeed: number;
  reps?: number;
  /** Queue attempts per job and backoff (Redis only). */
  attempts?: number;
  backoffMs?: number;
  /**
   * Wall-clock limit of one run in milliseconds (default: none). A run past it is stopped (its thread
   * terminated; on Redis the worker's thread, and the job is not retried) and reported failed with
   * code "batch.timeout"; the other runs go on.
   */
  runTimeoutMs?: number;
  /** Redis only: give up on unfinished jobs when none has finished for this long, in ms (default: never). */
  waitTimeoutMs?: number;
}

export interface CompareHooks {
  onProgress?: (p: BatchProgress) => void;
  /** Redis only: what the coordinator is waiting for (no workers, lost jobs), every few seconds. */
  onNotice?: (line: string) => void;
}

export interface ComparisonDocument extends ComparisonStats {
  format: "gapwatch-comparison/1";
  id: string;
  config: {
    env: string;
    rewards: string[];
    learners: string[];
    seeds: number[];
    steps: number | null;
    bootstrapSeed: number;
    bootstrapReps: number;
    backend: "local" | "redis" | "plan";
    /** Present for `compare --layouts`: `seeds` are layout numbers, every run trained with this seed. */
    layoutSeed?: number;
  };
  runDirs: { reward: string; learner: string; seed: number; runId: string; runDir: string }[];
  createdAt: string;
}

export interface CompareResult {
  /** The statistics document printed with --json. */
  stats: ComparisonStats;
  doc: ComparisonDocument;
  dir: string;
  records: RunRecord[];
  csv: string;
  outcomes: RunOutcome[];
}

export function recordOf(o: RunOutcome): RunRecord {
  const base = { reward: o.cell.reward, learner: o.cell.learner, seed: o.cell.seed };
  if (!o.ok) return { ...base, ok: false, error: o.error };
  const r = o.result;
  const ok = r.status === "complete";
  return {
    ...base,
    ok,
    runId: r.runId,
    runDir: r.runDir,
    verdict: r.verdict,
    ...(r.final ? { designer: r.final.designerNorm, intent: r.final.intentNorm } : {}),
    alerts: r.alerts.length,
    ...(ok ? {} : { error: { code: `run.${r.status}`, message: r.reason, where: r.runDir } }),
  };
}

/** Run every job on a local thread pool; each completed run is indexed as it arrives. */
export async function runLocalBatch(jobs: BatchJob[], runsDir: string, workers: number, onOutcome: (o: RunOutcome) => void, opts: PoolRunOptions = {}): Promise<RunOutcome[]> {
  const pool = new WorkerPool(Math.max(1, Math.min(workers, jobs.length)));
  try {
    return await Promise.all(
      jobs.map(async (job): Promise<RunOutcome> => {
        let o: RunOutcome;
        try {
          const result = await pool.runLocal(job, runsDir, opts);
          o = { jobId: job.jobId, cell: job.cell, ok: true, result };
        } catch (err) {
          o = { jobId: job.jobId, cell: job.cell, ok: false, error: err instanceof PoolError ? err.failure : failureOf(err) };
        }
        onOutcome(o);
        return o;
      }),
    );
  } finally {
    await pool.close();
  }
}

/**
 * Aggregate the outcomes of a sweep's jobs and write `<runsDir>/compare-<hash>/` (comparison.json,
 * comparison.csv) and its index row. The folder's hash covers the sweep and the job ids, so the same
 * sweep lands in the same folder whichever way its runs were made (pool, queue, plan tasks).
 */
export function writeComparison(
  cfg: Pick<CompareConfig, "env" | "rewards" | "learners" | "seeds" | "steps" | "bootstrapSeed" | "reps" | "layoutSeed">,
  jobs: BatchJob[],
  outcomes: RunOutcome[],
  runsDir: string,
  backend: ComparisonDocument["config"]["backend"],
  index: { recordComparison(doc: ComparisonDocument, dir: string): void },
): CompareResult {
  const records = outcomes.map(recordOf);
  const stats = aggregateComparison(records, {
    env: cfg.env,
    rewards: cfg.rewards,
    learners: cfg.learners,
    seeds: cfg.seeds,
    bootstrapSeed: cfg.bootstrapSeed,
    reps: cfg.reps,
  });
  const config: ComparisonDocument["config"] = {
    env: cfg.env,
    rewards: cfg.rewards,
    learners: cfg.learners,
    seeds: cfg.seeds,
    steps: cfg.steps ?? null,
    bootstrapSeed: cfg.bootstrapSeed,
    bootstrapReps: cfg.reps ?? BOOTSTRAP_DEFAULTS.reps,
    backend,
    ...(cfg.layoutSeed !== undefined ? { layoutSeed: cfg.layoutSeed } : {}),
  };
  const { backend: _b, ...hashed } = config;
  const id = "compare-" + sha256(canonicalJson({ ...hashed, jobs: jobs.map((j) => j.jobId) })).slice(0, 12);
  const dir = join(runsDir, id);
  mkdirSync(dir, { recursive: true });
  const runDirs = outcomes
    .filter((o): o is RunOutcome & { ok: true; result: RunResult } => o.ok)
    .map((o) => ({ ...o.cell, runId: o.result.runId, runDir: o.result.runDir }));
  const doc: ComparisonDocument = { format: "gapwatch-comparison/1", id, ...stats, config, runDirs, createdAt: new Date().toISOString() };
  const csv = comparisonCsv(cfg.env, records);
  writeJsonAtomic(join(dir, COMPARISON_FILE), doc);
  writeFileAtomic(join(dir, "comparison.csv"), csv);
  index.recordComparison(doc, dir);
  return { stats, doc, dir, records, csv, outcomes };
}

export async function runCompare(cfg: CompareConfig, hooks: CompareHooks = {}): Promise<CompareResult> {
  for (const l of cfg.learners) getLearner(l);
  if (cfg.rewards.length === 0) throw new InputError("compare.rewards", "--rewards needs at least one variant", "--rewards");
  if (cfg.runTimeoutMs !== undefined && !(cfg.runTimeoutMs > 0 && cfg.runTimeoutMs <= 2_147_483_647)) {
    throw new InputError("compare.runTimeout", `the run timeout must be a positive number of seconds up to about 24 days, got ${cfg.runTimeoutMs / 1000}`, "--run-timeout");
  }
  const runsDir = resolve(cfg.runsDir);
  // bullmq is loaded only for --queue.
  const queue = cfg.queue ? await import("./queue.js") : undefined;
  const target = queue && cfg.queue ? queue.parseQueueUrl(cfg.queue) : undefined;
  const jobs = planSweep(cfg, { ship: Boolean(target) });
  // Every variant, learner and file resolved before the first run: a misspelt name stops the sweep
  // at once instead of failing its own runs while the rest train. A simulator module is user code that
  // may hang while it compiles, which only a run's thread (with --run-timeout) can stop: for modules
  // the definition is imported (not compiled) for its variant names, in a thread stopped after the run
  // timeout (default MODULE_LOAD_TIMEOUT_MS) if its top-level code never returns, and the files are checked.
  if (isModuleSpec(cfg.env)) {
    if (!existsSync(resolve(cfg.env))) throw new InputError("env.notFound", "simulator module not found", cfg.env);
    const names = await moduleVariantNamesWithin(cfg.env, cfg.runTimeoutMs ?? MODULE_LOAD_TIMEOUT_MS);
    const moduleName = basename(cfg.env);
    for (const r of cfg.rewards) {
      if (/\.json$/i.test(r)) {
        if (!existsSync(resolve(r))) throw new InputError("reward.notFound", "reward file not found", r);
      } else if (!names.includes(r)) throw unknownVariant(r, moduleName, names);
    }
  } else {
    const checked = new Set<string>();
    for (const job of jobs) {
      const key = `${job.cell.reward}\u0000${job.cell.learner}`;
      if (checked.has(key)) continue;
      checked.add(key);
      await resolveTrainConfig(job.input);
    }
  }
  const index = openIndex(runsDir);
  let done = 0;
  let failed = 0;
  const onOutcome = (o: RunOutcome) => {
    done++;
    if (!o.ok || o.result.status !== "complete") failed++;
    if (o.ok) index.recordRun(o.result);
    hooks.onProgress?.({ done, total: jobs.length, failed, outcome: o });
  };
  let outcomes: RunOutcome[];
  try {
    outcomes = target && queue
      ? await queue.runOnQueue(target, jobs, { attempts: cfg.attempts, backoffMs: cfg.backoffMs, runTimeoutMs: cfg.runTimeoutMs, waitTimeoutMs: cfg.waitTimeoutMs, onNotice: hooks.onNotice, onOutcome, store: (job, value) => writeShippedRun(runsDir, job, value) })
      : await runLocalBatch(jobs, runsDir, cfg.workers ?? defaultWorkers(), onOutcome, { timeoutMs: cfg.runTimeoutMs });
    return writeComparison(cfg, jobs, outcomes, runsDir, target ? "redis" : "local", index);
  } finally {
    index.close();
  }
}

