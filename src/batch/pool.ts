/**
 * A fixed pool of worker threads that run batch jobs in parallel (one job per thread at a time).
 * Sized by the caller; `defaultWorkers()` is `os.availableParallelism()`. Jobs are handed out in
 * submission order as threads become free; results come back as they finish.
 *
 * From the build (dist/*.js) a thread loads pool-worker.js directly; from source (.ts, tests and
 * `tsx`) it boots through tsx's `tsImport`, so the same code runs in both without a build step.
 * A thread that dies (crash, out of memory) fails its job with code "batch.thread" and is replaced.
 */
import { availableParallelism } from "node:os";
import { createRequire } from "node:module";
import { fileURLToPath, pathToFileURL } from "node:url";
import { Worker } from "node:worker_threads";
import type { RunResult } from "../store/types.js";
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

const BOOT = `
const { workerData } = require("node:worker_threads");
import(workerData.tsxApi).then((m) => m.tsImport(workerData.entry, workerData.entry)).catch((e) => { setImmediate(() => { throw e; }); });
`;

function spawnThread(): Worker {
  const self = fileURLToPath(import.meta.url);
  if (self.endsWith(".js")) return new Worker(new URL("./pool-worker.js", import.meta.url));
  const entry = pathToFileURL(self.replace(/pool\.ts$/, "pool-worker.ts")).href;
  const tsxApi = pathToFileURL(createRequire(import.meta.url).resolve("tsx/esm/api")).href.replace(/\.cjs$/, ".mjs");
  return new Worker(BOOT, { eval: true, workerData: { entry, tsxApi } });
}

interface Task {
  req: PoolRequest;
  resolve: (v: RunResult | ShippedRun) => void;
  reject: (e: unknown) => void;
}

interface Slot {
  worker: Worker;
  ready: boolean;
  task: Task | null;
}

export class WorkerPool {
  private readonly slots: Slot[] = [];
  private readonly queue: Task[] = [];
  private nextId = 1;
  private closed = false;

  constructor(readonly size: number) {
    for (let i = 0; i < Math.max(1, size); i++) this.slots.push(this.makeSlot());
  }

  private makeSlot(): Slot {
    const slot: Slot = { worker: spawnThread(), ready: false, task: null };
    slot.worker.on("message", (m: PoolReply | { ready: true }) => {
      if ("ready" in m) {
        slot.ready = true;
        this.pump();
        return;
      }
      const t = slot.task;
      slot.task = null;
      if (t) {
        if (m.ok) t.resolve(m.value);
        else t.reject(new PoolError(m.error));
      }
      this.pump();
    });
    const die = (err: unknown) => {
      const t = slot.task;
      slot.task = null;
      slot.ready = false;
      if (t) t.reject(new PoolError({ code: "batch.thread", message: `worker thread died: ${(err as Error)?.message ?? String(err)}`, exitCode: 1 }));
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

  private pump(): void {
    for (const slot of this.slots) {
      if (!slot.ready || slot.task || this.queue.length === 0) continue;
      const t = this.queue.shift() as Task;
      slot.task = t;
      slot.worker.postMessage(t.req);
    }
  }

  private submit(req: Omit<PoolRequest, "id">): Promise<RunResult | ShippedRun> {
    if (this.closed) return Promise.reject(new Error("pool is closed"));
    return new Promise((resolve, reject) => {
      this.queue.push({ req: { ...req, id: this.nextId++ } as PoolRequest, resolve, reject });
      this.pump();
    });
  }

  /** Train a job into `runsDir` (this machine's run store). */
  runLocal(job: BatchJob, runsDir: string): Promise<RunResult> {
    return this.submit({ kind: "local", job, runsDir }) as Promise<RunResult>;
  }

  /** Train a job in a scratch folder and return its files (remote worker). */
  runRemote(job: BatchJob): Promise<ShippedRun> {
    return this.submit({ kind: "remote", job }) as Promise<ShippedRun>;
  }

  async close(): Promise<void> {
    this.closed = true;
    for (const t of this.queue.splice(0)) t.reject(new Error("pool closed"));
    await Promise.all(this.slots.map((s) => s.worker.terminate()));
  }
}
