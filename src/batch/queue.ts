/**
 * The distributed backend: BullMQ on Redis.
 *
 * Coordinator (`runOnQueue`): adds one job per run to the queue "gapwatch-runs" with a deterministic
 * job id (plan.ts `jobIdOf`: a hash of the run config and of the carried file texts). BullMQ ignores
 * an add whose id already exists, so resubmitting a sweep does not duplicate work: finished jobs
 * answer at once from their stored return value, waiting or active ones are simply awaited, and a job
 * that had failed for good is retried once more. Results come back in the job return value (the run
 * directory's files, see execute.ts); the coordinator writes the run directories and the index itself,
 * so workers need no shared disk and the run store looks exactly like a local run's.
 *
 * Retries: `attempts` (default 3) with exponential backoff (default 1 s, 2 s, 4 s ...). A bad-input
 * failure (InputError, exit code 2, e.g. "module.*" or "reward.unknown") is deterministic and is not
 * retried (BullMQ UnrecoverableError). A worker that dies mid-job stops renewing the job's lock;
 * another worker's stalled-job check (every `stalledInterval`) puts the job back in the queue, up to
 * `maxStalledCount` = 2 times. Every job ends completed or failed-with-reason, and the coordinator
 * reports each failure (code, message, attempts); none is dropped.
 *
 * Worker (`startQueueWorker`): a BullMQ Worker with `concurrency` C, each job trained in a thread of
 * a local WorkerPool of size C, so the event loop stays free to renew locks while training runs.
 *
 * Run timeout: `runTimeoutMs` travels in the job data (not in the job id, which names the run only).
 * A worker stops a job past it (its pool thread is terminated) and fails it with code
 * "batch.timeout" as an UnrecoverableError: a run that hung once would hang again, so it is not
 * retried, and the coordinator reports it like any failed run.
 */
import { Job, Queue, QueueEvents, UnrecoverableError, Worker, type ConnectionOptions } from "bullmq";
import { InputError } from "../errors.js";
import type { RunResult } from "../run/schema.js";
import { logger } from "../util/log.js";
import { failureOf, writeShippedRun } from "./execute.js";
import { PoolError, WorkerPool } from "./pool.js";
import type { BatchJob, RunFailure, RunOutcome, ShippedRun } from "./types.js";

export const QUEUE_NAME = "gapwatch-runs";

export interface QueueTarget {
  connection: ConnectionOptions;
  name: string;
  url: string;
}

/** `redis://[user:password@]host[:port][/db][?queue=name]` -> BullMQ connection options. */
export function parseQueueUrl(url: string): QueueTarget {
  let u: URL;
  try {
    u = new URL(url);
  } catch {
    throw new InputError("queue.url", `"${url}" is not a URL; give redis://host:port/db, e.g. redis://127.0.0.1:6379/0`, "--queue");
  }
  if (u.protocol !== "redis:") throw new InputError("queue.url", `only redis:// URLs are supported, got ${u.protocol}//`, "--queue");
  const db = u.pathname && u.pathname !== "/" ? Number(u.pathname.slice(1)) : 0;
  if (!Number.isInteger(db) || db < 0) throw new InputError("queue.url", `database number must be a non-negative integer, got "${u.pathname.slice(1)}"`, "--queue");
  const port = u.port ? Number(u.port) : 6379;
  const name = u.searchParams.get("queue") ?? QUEUE_NAME;
  if (!/^[A-Za-z0-9_.-]+$/.test(name)) throw new InputError("queue.url", `queue name "${name}" may use letters, digits, _ . - only`, "--queue");
  const connection: ConnectionOptions = {
    host: u.hostname || "127.0.0.1",
    port,
    db,
    ...(u.username ? { username: decodeURIComponent(u.username) } : {}),
    ...(u.password ? { password: decodeURIComponent(u.password) } : {}),
    maxRetriesPerRequest: null,
  };
  return { connection, name, url };
}

export interface JobData {
  format: "gapwatch-job/1";
  job: BatchJob;
  /** Wall-clock limit of the run in ms (absent: none). */
  runTimeoutMs?: number;
}

export interface SubmitOptions {
  attempts?: number;
  backoffMs?: number;
  /** Wall-clock limit of one run in ms, enforced by the worker (default: none). */
  runTimeoutMs?: number;
  /** Called when each job ends. */
  onOutcome?: (o: RunOutcome) => void;
  /** Writes and indexes a completed run (the coordinator's run store). */
  store: (shipped: ShippedRun) => RunResult;
}

export const QUEUE_DEFAULTS = { attempts: 3, backoffMs: 1000, lockMs: 30_000, stalledMs: 30_000, maxStalledCount: 2 } as const;

function parseFailure(reason: string | undefined): RunFailure {
  if (reason) {
    try {
      const f = JSON.parse(reason) as RunFailure;
      if (f && typeof f.code === "string" && typeof f.message === "string") return f;
    } catch {
      /* not one of ours */
    }
  }
  const stalled = /stalled/i.test(reason ?? "");
  return { code: stalled ? "batch.stalled" : "batch.failed", message: reason ?? "the job failed without a reason", exitCode: 1 };
}

/** Enqueue every job, wait for all of them, store each completed run. Resolves to one outcome per job, in job order. */
export async function runOnQueue(target: QueueTarget, jobs: BatchJob[], opts: SubmitOptions): Promise<RunOutcome[]> {
  const queue = new Queue<JobData, ShippedRun>(target.name, { connection: target.connection });
  const events = new QueueEvents(target.name, { connection: target.connection });
  queue.setMaxListeners(0);
  events.setMaxListeners(0);
  const attempts = opts.attempts ?? QUEUE_DEFAULTS.attempts;
  const backoffMs = opts.backoffMs ?? QUEUE_DEFAULTS.backoffMs;
  try {
    await Promise.all([queue.waitUntilReady(), events.waitUntilReady()]);
    // One round trip for the whole sweep; an id that already exists is left as it is (no duplicate work).
    const added = await queue.addBulk(
      jobs.map((job) => ({
        name: "run",
        data: { format: "gapwatch-job/1" as const, job, ...(opts.runTimeoutMs !== undefined ? { runTimeoutMs: opts.runTimeoutMs } : {}) },
        opts: { jobId: job.jobId, attempts, backoff: { type: "exponential", delay: backoffMs }, removeOnComplete: false, removeOnFail: false },
      })),
    );
    // A resubmitted sweep: jobs that had failed for good get one more round of attempts.
    const states = await Promise.all(added.map((j) => queue.getJobState(j.id as string)));
    for (let i = 0; i < added.length; i++) {
      if (states[i] !== "failed") continue;
      const stored = await Job.fromId<JobData, ShippedRun>(queue, added[i].id as string);
      await stored?.retry("failed");
    }
    return await Promise.all(
      jobs.map(async (job, i): Promise<RunOutcome> => {
        let outcome: RunOutcome;
        try {
          let value = (await added[i].waitUntilFinished(events)) as ShippedRun | string | undefined;
          if (typeof value === "string") value = JSON.parse(value) as ShippedRun;
          if (!value || typeof value !== "object" || !value.files) {
            value = (await Job.fromId<JobData, ShippedRun>(queue, job.jobId))?.returnvalue;
          }
          if (!value) throw new Error(JSON.stringify({ code: "batch.noResult", message: "the job completed without a result", exitCode: 1 }));
          outcome = { jobId: job.jobId, cell: job.cell, ok: true, result: opts.store(value) };
        } catch (err) {
          const stored = await Job.fromId(queue, job.jobId).catch(() => undefined);
          const reason = stored?.failedReason ?? (err as Error)?.message;
          const f = err instanceof InputError ? failureOf(err) : parseFailure(reason);
          outcome = { jobId: job.jobId, cell: job.cell, ok: false, error: f, attempts: stored?.attemptsMade };
        }
        opts.onOutcome?.(outcome);
        return outcome;
      }),
    );
  } finally {
    await events.close();
    await queue.close();
  }
}

export interface WorkerOptions {
  concurrency?: number;
  /** Job lock duration (a worker that stops renewing it is presumed dead after this long). */
  lockMs?: number;
  /** How often this worker checks for stalled jobs of dead workers. */
  stalledMs?: number;
  onEvent?: (kind: "active" | "completed" | "failed" | "error", jobId: string, detail: string) => void;
}

export interface QueueWorkerHandle {
  worker: Worker<JobData, ShippedRun>;
  close(): Promise<void>;
}

export async function startQueueWorker(target: QueueTarget, opts: WorkerOptions = {}): Promise<QueueWorkerHandle> {
  const concurrency = Math.max(1, opts.concurrency ?? 1);
  const pool = new WorkerPool(concurrency);
  const log = logger().child({ queue: target.name });
  const event: NonNullable<WorkerOptions["onEvent"]> = (kind, jobId, detail) => {
    log.info({ event: kind, jobId }, detail);
    opts.onEvent?.(kind, jobId, detail);
  };
  const worker = new Worker<JobData, ShippedRun>(
    target.name,
    async (job) => {
      event("active", job.id as string, `${job.data.job.cell.reward} ${job.data.job.cell.learner} seed ${job.data.job.cell.seed} (attempt ${job.attemptsMade + 1})`);
      try {
        return await pool.runRemote(job.data.job, { timeoutMs: job.data.runTimeoutMs });
      } catch (err) {
        const f = err instanceof PoolError ? err.failure : failureOf(err);
        if (f.exitCode === 2 || f.code === "batch.timeout") throw new UnrecoverableError(JSON.stringify(f));
        throw new Error(JSON.stringify(f));
      }
    },
    {
      connection: target.connection,
      concurrency,
      lockDuration: opts.lockMs ?? QUEUE_DEFAULTS.lockMs,
      stalledInterval: opts.stalledMs ?? QUEUE_DEFAULTS.stalledMs,
      maxStalledCount: QUEUE_DEFAULTS.maxStalledCount,
    },
  );
  worker.on("completed", (job) => event("completed", job.id as string, job.returnvalue?.runId ?? ""));
  worker.on("failed", (job, err) => event("failed", job?.id ?? "?", err.message));
  // Connection errors: ioredis reconnects by itself; report them so an operator sees a lost Redis.
  worker.on("error", (err) => event("error", "-", err.message));
  await worker.waitUntilReady();
  return {
    worker,
    async close() {
      await worker.close();
      await pool.close();
    },
  };
}

export { writeShippedRun };
