/**
 * Memory figures of the benchmark: bytes held after a full garbage collection (V8 heap in use plus
 * ArrayBuffer backing stores, i.e. typed arrays) and the process's peak resident set. The collector is
 * reached through V8's --expose-gc flag set at run time; without it the figures are taken as they are.
 */
import v8 from "node:v8";
import vm from "node:vm";

let collect: (() => void) | null | undefined;

function gcNow(): void {
  if (collect === undefined) {
    try {
      v8.setFlagsFromString("--expose-gc");
      collect = vm.runInNewContext("gc") as () => void;
    } catch {
      collect = null;
    }
  }
  collect?.();
  collect?.();
}

/** Bytes held after a full collection: V8 heap in use + ArrayBuffer memory (typed arrays). */
export function heldBytes(): number {
  gcNow();
  const m = process.memoryUsage();
  return m.heapUsed + m.arrayBuffers;
}

/** Resident set now, in bytes. */
export function rssBytes(): number {
  return process.memoryUsage().rss;
}

/** Peak resident set of this process so far, in bytes (a high-water mark: meaningful when the entry runs alone). */
export function peakRssBytes(): number {
  return process.resourceUsage().maxRSS * 1024;
}
