/**
 * Held-out evaluation on worker threads: when there are more layouts than one thread handles quickly
 * (PARALLEL_FROM), the layouts are dealt round-robin to `threads` workers (holdout-worker.ts, started
 * by src/util/worker.ts), each loading and solving its share; the regretNorms come back in layout
 * order, identical to the single-threaded evaluation (same exact solves, each layout on one thread).
 */
import { GapwatchError } from "../errors.js";
import { startWorker } from "../util/worker.js";

/** Layouts above which the retune command evaluates held-out layouts on worker threads. */
export const PARALLEL_FROM = 50;

export async function holdoutRegretsParallel(env: string, layouts: number[], weights: Record<string, number>, opts: { threads: number; maxStates?: number }): Promise<number[]> {
  const threads = Math.max(1, Math.min(opts.threads, layouts.length));
  const shares = Array.from({ length: threads }, (_, t) => layouts.filter((_, i) => i % threads === t));
  const results = await Promise.all(
    shares.map(
      (share) =>
        new Promise<number[]>((resolve, reject) => {
          const w = startWorker(import.meta.url, "holdout-worker", { env, layouts: share, weights: { ...weights }, maxStates: opts.maxStates });
          let done = false;
          w.once("message", (m: { ok: boolean; regretNorms?: number[]; error?: { code: string; message: string; where?: string } }) => {
            done = true;
            void w.terminate();
            if (m.ok) resolve(m.regretNorms as number[]);
            else reject(new GapwatchError(m.error!.code, m.error!.message, { where: m.error!.where }));
          });
          w.once("error", (e) => reject(e));
          w.once("exit", (code) => {
            if (!done) reject(new Error(`held-out evaluation thread ended (exit ${code}) before it answered`));
          });
        }),
    ),
  );
  const out = new Array<number>(layouts.length);
  results.forEach((r, t) => r.forEach((x, j) => (out[j * threads + t] = x)));
  return out;
}
