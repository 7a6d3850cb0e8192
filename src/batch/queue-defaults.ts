/** Defaults of the Redis job queue (queue.ts), in a module of their own so the CLI can show them without loading bullmq. */
export const QUEUE_DEFAULTS = { attempts: 3, backoffMs: 1000, lockMs: 30_000, stalledMs: 30_000, maxStalledCount: 2 } as const;
