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
 * Untrusted data: whoever can write to the Redis database can plant jobs and results, so a worker
 * checks every job (only .json files travel; modules only from `allowModules` folders; size limit) and
 * the coordinator checks every result (the run id must be this job's, the files only run files) before
 * acting on it (job-guard.ts).
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
import { QUEUE_DEFAULTS } from "./queue-defaults.js";
import type { RunResult } from "../run/schema.js";
import { logger } from "../util/log.js";
import { failureOf, writeShippedRun } from "./execute.js";
import { checkJobForWorker, type WorkerPolicy } from "./job-guard.js";
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
  /** Checks a completed job's result (untrusted: it comes from Redis), then writes and indexes its run. */
  store: (job: BatchJob, value: unknown) => RunResult;
}

export { QUEUE_DEFAULTS };

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

interface RedisClientLike {
  waitUntilReady(): Promise<unknown>;
  on(event: "error", fn: (err: Error) => void): unknown;
  close(): Promise<void>;
}

const sleep = (ms: number) => new Promise<void>((r) => setTimeout(r, ms));

/** Close clients without waiting more than `ms` (a client that never connected may not answer). */
async function closeWithin(clients: RedisClientLike[], ms = 2000): Promise<void> {
  await Promise.race([Promise.all(clients.map((c) => c.close().catch(() => undefined))), sleep(ms)]);
}

/**
 * Wait until every client is connected, or fail with one line naming the URL after `ms`: with nothing
 * listening, ioredis would otherwise retry (and report an error) twice a second forever.
 */
export async function readyOrFail(clients: RedisClientLike[], target: QueueTarget, ms: number, where: string): Promise<void> {
  let last = "no answer";
  for (const c of clients) c.on("error", (err) => (last = err?.message ?? String(err)));
  let timer: NodeJS.Timeout | undefined;
  const timeout = new Promise<"timeout">((r) => (timer = setTimeout(() => r("timeout"), ms)));
  const outcome = await Promise.race([Promise.all(clients.map((c) => c.waitUntilReady())).then(() => "ready" as const), timeout]);
  clearTimeout(timer);
  if (outcome === "timeout") {
    await closeWithin(clients);
    throw new InputError("queue.unreachable", `cannot reach Redis at ${target.url} within ${Math.round(ms / 1000)} s (${last}); is redis-server running there, and is the URL right?`, where);
  }
}

/** How a queue wait reports what it is waiting for (stderr lines in the CLI). */
export interface QueueWaitOptions {
  /** Connection deadline in ms (default 5000). */
  connectTimeoutMs?: number;
  /** How often unfinished jobs are looked up in Redis, in ms (default 2000). */
  pollMs?: number;
  /** How often a stall is reported, in ms (default 5000). */
  noticeMs?: number;
  /** Give up on the jobs still unfinished when no job has finished for this long, in ms (default: never). */
  waitTimeoutMs?: number;
  onNotice?: (line: string) => void;
}

/**
 * Enqueue every job, wait for all of them, store each completed run. Resolves to one outcome per job,
 * in job order. Besides BullMQ's completion events, the coordinator looks its unfinished jobs up in
 * Redis every `pollMs`: a job that has vanished (Redis restarted without persistence) is enqueued
 * again under the same id, a finished job whose event was missed is collected, and while no worker is
 * connected it says so every `noticeMs`. With `waitTimeoutMs`, jobs still unfinished when nothing has
 * finished for that long are reported failed (batch.waitTimeout).
 */
export async function runOnQueue(target: QueueTarget, jobs: BatchJob[], opts: SubmitOptions & QueueWaitOptions): Promise<RunOutcome[]> {
  const queue = new Queue<JobData, ShippedRun>(target.name, { connection: target.connection });
  const events = new QueueEvents(target.name, { connection: target.connection });
  queue.setMaxListeners(0);
  events.setMaxListeners(0);
  const attempts = opts.attempts ?? QUEUE_DEFAULTS.attempts;
  const backoffMs = opts.backoffMs ?? QUEUE_DEFAULTS.backoffMs;
  const pollMs = opts.pollMs ?? 2000;
  const noticeMs = opts.noticeMs ?? 5000;
  await readyOrFail([queue, events], target, opts.connectTimeoutMs ?? 5000, "--queue");
  const bulkItem = (job: BatchJob) => ({
    name: "run",
    data: { format: "gapwatch-job/1" as const, job, ...(opts.runTimeoutMs !== undefined ? { runTimeoutMs: opts.runTimeoutMs } : {}) },
    opts: { jobId: job.jobId, attempts, backoff: { type: "exponential" as const, delay: backoffMs }, removeOnComplete: false, removeOnFail: false },
  });
  const outcomes: (RunOutcome | undefined)[] = new Array(jobs.length);
  let settledCount = 0;
  let lastSettle = Date.now();
  let wake: () => void = () => undefined;
  const settle = (i: number, make: () => RunOutcome) => {
    if (outcomes[i]) return;
    const o = make();
    outcomes[i] = o;
    settledCount++;
    lastSettle = Date.now();
    opts.onOutcome?.(o);
    if (settledCount === jobs.length) wake();
  };
  const completed = (i: number, value: unknown) =>
    settle(i, () => {
      const job = jobs[i];
      try {
        let v = value;
        if (typeof v === "string") v = JSON.parse(v);
        return { jobId: job.jobId, cell: job.cell, ok: true, result: opts.store(job, v) };
      } catch (err) {
        return { jobId: job.jobId, cell: job.cell, ok: false, error: failureOf(err) };
      }
    });
  const failed = (i: number, f: RunFailure, attemptsMade?: number) => settle(i, () => ({ jobId: jobs[i].jobId, cell: jobs[i].cell, ok: false, error: f, attempts: attemptsMade }));
  try {
    // One round trip for the whole sweep; an id that already exists is left as it is (no duplicate work).
    const added = await queue.addBulk(jobs.map(bulkItem));
    // A resubmitted sweep: jobs that had failed for good get one more round of attempts.
    const states = await Promise.all(added.map((j) => queue.getJobState(j.id as string)));
    for (let i = 0; i < added.length; i++) {
      if (states[i] !== "failed") continue;
      const stored = await Job.fromId<JobData, ShippedRun>(queue, added[i].id as string);
      await stored?.retry("failed");
    }
    // Completion events: the fast path.
    jobs.forEach((job, i) => {
      added[i].waitUntilFinished(events).then(
        async (value: unknown) => {
          if (!value || (typeof value === "object" && !(value as ShippedRun).files)) value = (await Job.fromId<JobData, ShippedRun>(queue, job.jobId))?.returnvalue;
          if (!value) return failed(i, { code: "batch.noResult", message: "the job completed without a result", exitCode: 1 });
          completed(i, value);
        },
        async (err: unknown) => {
          if (outcomes[i]) return;
          const stored = await Job.fromId(queue, job.jobId).catch(() => undefined);
          failed(i, parseFailure(stored?.failedReason ?? (err as Error)?.message), stored?.attemptsMade);
        },
      );
    });
    // The look-up loop: lost jobs, missed events, stalls, the wait deadline.
    const done = new Promise<void>((r) => (wake = r));
    if (settledCount === jobs.length) wake();
    let lastNotice = 0;
    while (settledCount < jobs.length) {
      await Promise.race([done, sleep(pollMs)]);
      if (settledCount === jobs.length) break;
      const open = jobs.map((_, i) => i).filter((i) => !outcomes[i]);
      const lost: BatchJob[] = [];
      for (const i of open) {
        const state = await queue.getJobState(jobs[i].jobId);
        if (state === "completed") {
          const stored = await Job.fromId<JobData, ShippedRun>(queue, jobs[i].jobId);
          if (stored?.returnvalue) completed(i, stored.returnvalue);
        } else if (state === "failed") {
          const stored = await Job.fromId(queue, jobs[i].jobId);
          failed(i, parseFailure(stored?.failedReason), stored?.attemptsMade);
        } else if (state === "unknown") lost.push(jobs[i]);
      }
      if (lost.length) {
        await queue.addBulk(lost.map(bulkItem));
        opts.onNotice?.(`${lost.length} job(s) had vanished from Redis at ${target.url} (a restart without persistence?); enqueued again`);
      }
      const waiting = jobs.length - settledCount;
      if (waiting > 0 && Date.now() - lastNotice >= noticeMs) {
        const workers = await queue.getWorkersCount();
        const quiet = Math.round((Date.now() - lastSettle) / 1000);
        if (workers === 0) opts.onNotice?.(`no worker is connected to queue ${target.name} at ${target.url}; ${waiting} of ${jobs.length} job(s) waiting (start: gapwatch worker --queue ${target.url})`);
        else if (quiet * 1000 >= noticeMs) opts.onNotice?.(`${waiting} of ${jobs.length} job(s) unfinished, ${workers} worker(s) connected, none finished in the last ${quiet} s`);
        lastNotice = Date.now();
      }
      if (opts.waitTimeoutMs !== undefined && waiting > 0 && Date.now() - lastSettle >= opts.waitTimeoutMs) {
        const s = Math.round(opts.waitTimeoutMs / 1000);
        for (const i of jobs.map((_, k) => k).filter((k) => !outcomes[k])) {
          failed(i, { code: "batch.waitTimeout", message: `no result within --wait-timeout ${s} s (the job stays in the queue; run the same compare again to collect it)`, exitCode: 1 });
        }
      }
    }
    return outcomes as RunOutcome[];
  } finally {
    await closeWithin([events, queue]);
  }
}

export interface WorkerOptions extends WorkerPolicy {
  concurrency?: number;
  /** Job lock duration (a worker that stops renewing it is presumed dead after this long). */
  lockMs?: number;
  /** Connection deadline in ms (default 5000): past it, one line naming the URL. */
  connectTimeoutMs?: number;
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
      try {
        // Job data comes from Redis: check it before anything of it is written, loaded or run.
        const checked = checkJobForWorker(job.data, opts);
        const timeoutMs = job.data.runTimeoutMs;
        if (timeoutMs !== undefined && !(typeof timeoutMs === "number" && timeoutMs > 0 && timeoutMs <= 2_147_483_647)) throw new InputError("batch.job", "the job's run timeout is not a positive number of ms", "queued job");
        event("active", job.id as string, `${checked.cell?.reward} ${checked.cell?.learner} seed ${checked.cell?.seed} (attempt ${job.attemptsMade + 1})`);
        return await pool.runRemote(checked, { timeoutMs });
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
  try {
    await readyOrFail([worker], target, opts.connectTimeoutMs ?? 5000, "--queue");
  } catch (err) {
    await pool.close();
    throw err;
  }
  // Later connection errors: ioredis reconnects by itself; report them so an operator sees a lost
  // Redis, at most one line every 10 s (it retries twice a second).
  let lastError = 0;
  worker.on("error", (err) => {
    if (Date.now() - lastError < 10_000) return;
    lastError = Date.now();
    event("error", "-", `${target.url}: ${err.message}`);
  });
  return {
    worker,
    async close() {
      await worker.close();
      await pool.close();
    },
  };
}

export { writeShippedRun };
