/**
 * A fixed pool of worker threads that run batch jobs in parallel (one job per thread at a time).
 * Sized by the caller; `defaultWorkers()` is `os.availableParallelism()`. Results come back as they
 * finish. Jobs are handed out in submission order with one preference: a free thread first takes a
 * job on an (env, reward) it has already run, else one on an (env, reward) no other thread has run.
 * Each thread caches a built-in scenario's model and each variant's score references (value
 * iteration, 25-50 ms per variant), so this keeps a 4-variant sweep on 2 threads from computing every
 * variant's references twice. A run depends only on its config, so the order changes no result.
 *
 * `timeoutMs` (per job): a job still running that long after its thread took it is stopped with
 * `worker.terminate()` (the only way to stop a synchronous loop such as a module's `while (true)`),
 * fails with code "batch.timeout", and its thread is replaced; the other jobs go on.
 *
 * Threads run pool-worker.ts, started by src/util/worker.ts (the built .js, or through tsx from source).
 * A thread that dies (crash, out of memory) fails its job with code "batch.thread" and is replaced.
 */
import { availableParallelism } from "node:os";
import type { Worker } from "node:worker_threads";
import type { RunResult } from "../run/schema.js";
import { logger } from "../util/log.js";
import { startWorker } from "../util/worker.js";
import type { BatchJob, RunFailure, ShippedRun } from "./types.js";

export type PoolRequest = { id: number; kind: "local"; job: BatchJob; runsDir: string } | { id: number; kind: "remote"; job: BatchJob; runsDir?: undefined };
export type PoolReply = { id: number; ok: true; value: RunResult | ShippedRun } | { id: number; ok: false; error: RunFailure };

export class PoolError extends Error {
  constructor(readonly failure: RunFailure) {
    super(failure.message);
  }
}

export function defaultWorkers(): number {
  return Math.max(1, availableParallelism());
}

function spawnThread(): Worker {
  return startWorker(import.meta.url, "pool-worker");
}

export interface PoolRunOptions {
  /** Wall-clock limit of the job in milliseconds, counted from when a thread takes it (default: none). */
  timeoutMs?: number;
}

interface Task {
  req: PoolRequest;
  key: string;
  timeoutMs?: number;
  timer?: ReturnType<typeof setTimeout>;
  resolve: (v: RunResult | ShippedRun) => void;
  reject: (e: unknown) => void;
}

interface Slot {
  worker: Worker;
  ready: boolean;
  task: Task | null;
  /** (env, reward) keys this thread has run: its caches hold their model and references. */
  seen: Set<string>;
}

/** The failure of a job stopped by its time limit: one line naming env, reward, learner, seed and the limit. */
export function timeoutFailure(job: BatchJob, timeoutMs: number): RunFailure {
  const c = job.cell;
  return {
    code: "batch.timeout",
    message: `run of ${job.input.env} reward ${c.reward} ${c.learner} seed ${c.seed} exceeded the run timeout of ${timeoutMs / 1000} s and was stopped; raise --run-timeout or fix the module's step`,
    where: job.input.env,
    exitCode: 1,
  };
}

const keyOf = (job: BatchJob) => `${job.input.env}\u0000${job.input.reward ?? ""}`;

export class WorkerPool {
  private readonly slots: Slot[] = [];
  /** Waiting jobs grouped by (env, reward) key, keys in first-submitted order. */
  private readonly queue = new Map<string, Task[]>();
  private nextId = 1;
  private closed = false;

  constructor(readonly size: number) {
    for (let i = 0; i < Math.max(1, size); i++) this.slots.push(this.makeSlot());
  }

  private makeSlot(): Slot {
    const slot: Slot = { worker: spawnThread(), ready: false, task: null, seen: new Set() };
    slot.worker.on("message", (m: PoolReply | { ready: true }) => {
      if ("ready" in m) {
        slot.ready = true;
        this.pump();
        return;
      }
      const t = slot.task;
      slot.task = null;
      if (t) {
        clearTimeout(t.timer);
        if (m.ok) t.resolve(m.value);
        else t.reject(new PoolError(m.error));
      }
      this.pump();
    });
    const die = (err: unknown) => {
      const t = slot.task;
      slot.task = null;
      slot.ready = false;
      if (t) clearTimeout(t.timer);
      const message = `worker thread died: ${(err as Error)?.message ?? String(err)}`;
      logger().info({ event: "thread-died", jobId: t?.req.job.jobId }, message);
      if (t) t.reject(new PoolError({ code: "batch.thread", message, exitCode: 1 }));
      const i = this.slots.indexOf(slot);
      if (i >= 0 && !this.closed) {
        this.slots[i] = this.makeSlot();
      }
    };
    slot.worker.on("error", die);
    slot.worker.on("exit", (code) => {
      if (!this.closed && this.slots.includes(slot)) die(new Error(`exit code ${code}`));
    });
    return slot;
  }

  /** The next job for `slot` (see the header): a key it has run, else a key no other thread has run, else the oldest. */
  private take(slot: Slot): Task | undefined {
    let key: string | undefined;
    for (const k of slot.seen) if (this.queue.has(k)) key ??= k;
    if (key === undefined) {
      for (const k of this.queue.keys()) {
        if (!this.slots.some((o) => o !== slot && o.seen.has(k))) {
          key = k;
          break;
        }
      }
    }
    key ??= this.queue.keys().next().value;
    if (key === undefined) return undefined;
    const bucket = this.queue.get(key) as Task[];
    const t = bucket.shift();
    if (bucket.length === 0) this.queue.delete(key);
    return t;
  }

  private pump(): void {
    for (const slot of this.slots) {
      if (!slot.ready || slot.task || this.queue.size === 0) continue;
      const t = this.take(slot) as Task;
      slot.task = t;
      slot.seen.add(t.key);
      slot.worker.postMessage(t.req);
      if (t.timeoutMs !== undefined) t.timer = setTimeout(() => this.expire(slot, t), t.timeoutMs);
    }
  }

  /** Stop a job past its time limit: replace its thread (terminate is the only stop for a busy loop) and fail the job. */
  private expire(slot: Slot, t: Task): void {
    if (slot.task !== t) return;
    slot.task = null;
    slot.ready = false;
    const i = this.slots.indexOf(slot);
    if (i >= 0 && !this.closed) this.slots[i] = this.makeSlot();
    slot.worker.terminate().catch(() => undefined);
    const failure = timeoutFailure(t.req.job, t.timeoutMs as number);
    logger().info({ event: "timeout", jobId: t.req.job.jobId }, failure.message);
    t.reject(new PoolError(failure));
  }

  private submit(req: Omit<PoolRequest, "id">, opts: PoolRunOptions): Promise<RunResult | ShippedRun> {
    if (this.closed) return Promise.reject(new Error("pool is closed"));
    const timeoutMs = opts.timeoutMs;
    if (timeoutMs !== undefined && !(timeoutMs > 0 && timeoutMs <= 2_147_483_647)) return Promise.reject(new RangeError(`timeoutMs must be in (0, 2147483647], got ${timeoutMs}`));
    return new Promise((resolve, reject) => {
      const key = keyOf(req.job);
      const bucket = this.queue.get(key);
      const t: Task = { req: { ...req, id: this.nextId++ } as PoolRequest, key, timeoutMs, resolve, reject };
      if (bucket) bucket.push(t);
      else this.queue.set(key, [t]);
      this.pump();
    });
  }

  /** Train a job into `runsDir` (this machine's run store). */
  runLocal(job: BatchJob, runsDir: string, opts: PoolRunOptions = {}): Promise<RunResult> {
    return this.submit({ kind: "local", job, runsDir }, opts) as Promise<RunResult>;
  }

  /** Train a job in a scratch folder and return its files (remote worker). */
  runRemote(job: BatchJob, opts: PoolRunOptions = {}): Promise<ShippedRun> {
    return this.submit({ kind: "remote", job }, opts) as Promise<ShippedRun>;
  }

  async close(): Promise<void> {
    this.closed = true;
    for (const bucket of this.queue.values()) for (const t of bucket) t.reject(new Error("pool closed"));
    this.queue.clear();
    for (const s of this.slots) if (s.task) clearTimeout(s.task.timer);
    await Promise.all(this.slots.map((s) => s.worker.terminate()));
  }
}
