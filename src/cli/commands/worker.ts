/**
 * `gapwatch worker --queue redis://host:port/db [--concurrency C]`: process comparison jobs from Redis
 * on this machine until stopped (SIGINT / SIGTERM finish the jobs in hand, then exit 0). Runs are
 * trained in a scratch folder and shipped back in the job result; nothing is left on this disk.
 * Jobs are untrusted: only .json data files travel; a job may name a simulator module only inside a
 * folder given with --allow-modules.
 */
import type { Command } from "commander";
import { availableParallelism } from "node:os";
import { existsSync, statSync } from "node:fs";
import { EXIT, InputError, printableLine } from "../../errors.js";
import { parseList } from "../../batch/plan.js";
import { QUEUE_DEFAULTS } from "../../batch/queue-defaults.js";
import { action, intOption, type CliContext } from "../context.js";

export function registerWorker(program: Command, ctx: CliContext): void {
  program
    .command("worker")
    .description("process `gapwatch compare --queue` jobs from Redis on this machine (any number of machines may run workers)")
    .requiredOption("--queue <url>", "Redis URL, e.g. redis://127.0.0.1:6379/0")
    .option("--concurrency <c>", `jobs trained at once, one thread each (default: cores, here ${availableParallelism()})`)
    .option("--lock-ms <ms>", `job lock duration: a silent worker's job is retried elsewhere after this (default ${QUEUE_DEFAULTS.lockMs})`)
    .option("--stalled-ms <ms>", `how often to look for jobs of dead workers (default ${QUEUE_DEFAULTS.stalledMs})`)
    .option("--allow-modules <dirs>", "folders (comma-separated) whose simulator modules jobs may name; without it, jobs naming a module are refused (only .json data files travel in jobs)")
    .option("--quiet", "no line per job on stderr")
    .action(
      action(ctx, async (opts: { queue: string; concurrency?: string; lockMs?: string; stalledMs?: string; allowModules?: string; quiet?: boolean }) => {
        // bullmq is loaded by this command only.
        const { parseQueueUrl, startQueueWorker } = await import("../../batch/queue.js");
        const target = parseQueueUrl(opts.queue);
        const concurrency = intOption(opts.concurrency, "--concurrency", { def: availableParallelism() });
        const log = (line: string) => {
          if (!opts.quiet) ctx.io.err(`${new Date().toISOString()} ${printableLine(line)}\n`);
        };
        const allowModules = opts.allowModules === undefined ? [] : parseList(opts.allowModules, "--allow-modules");
        for (const dir of allowModules) {
          if (!existsSync(dir) || !statSync(dir).isDirectory()) throw new InputError("cli.allowModules", `"${dir}" is not a folder`, "--allow-modules");
        }
        const handle = await startQueueWorker(target, {
          concurrency,
          allowModules,
          lockMs: intOption(opts.lockMs, "--lock-ms", { min: 100, def: QUEUE_DEFAULTS.lockMs }),
          stalledMs: intOption(opts.stalledMs, "--stalled-ms", { min: 100, def: QUEUE_DEFAULTS.stalledMs }),
          onEvent: (kind, jobId, detail) => log(`${kind} ${jobId} ${detail}`),
        });
        log(`worker ${process.pid} on ${target.url} queue ${target.name}, concurrency ${concurrency}`);
        await new Promise<void>((done) => {
          const stop = () => {
            process.removeListener("SIGINT", stop);
            process.removeListener("SIGTERM", stop);
            log(`worker ${process.pid} stopping`);
            handle.close().then(done, done);
          };
          process.on("SIGINT", stop);
          process.on("SIGTERM", stop);
        });
        return EXIT.ok;
      }),
    );
}
