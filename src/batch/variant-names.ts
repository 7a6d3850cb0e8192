/**
 * A simulator module's reward variant names, read in a thread of its own so that a module whose
 * top-level code never returns (a busy loop, a wait on something that never comes) cannot hang
 * `compare` before its first run: the thread is stopped after `timeoutMs` and the sweep ends with one
 * line naming the module and the limit.
 */
import { GapwatchError, InputError } from "../errors.js";
import { startWorker } from "../util/worker.js";
import type { RunFailure } from "./types.js";

/** How long the pre-check waits for a module to load when no --run-timeout is given. */
export const MODULE_LOAD_TIMEOUT_MS = 60_000;

export async function moduleVariantNamesWithin(file: string, timeoutMs: number): Promise<string[]> {
  const worker = startWorker(import.meta.url, "variant-names-worker", { file });
  try {
    return await new Promise<string[]>((resolveNames, reject) => {
      const timer = setTimeout(() => {
        reject(
          new InputError(
            "module.loadTimeout",
            `loading the simulator module did not finish within ${timeoutMs / 1000} s (its top-level code may never return); fix the module, or raise --run-timeout if it is only slow to load`,
            file,
          ),
        );
      }, timeoutMs);
      worker.once("message", (msg: { ok: true; names: string[] } | { ok: false; error: RunFailure }) => {
        clearTimeout(timer);
        if (msg.ok) resolveNames(msg.names);
        else reject(new GapwatchError(msg.error.code, msg.error.message, { where: msg.error.where, exitCode: msg.error.exitCode }));
      });
      worker.once("error", (err) => {
        clearTimeout(timer);
        reject(new InputError("module.load", `cannot load simulator module: ${err?.message ?? String(err)}`, file));
      });
    });
  } finally {
    await worker.terminate();
  }
}
