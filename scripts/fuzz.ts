/**
 * Long fuzz run over model and reward files (the seeded engine in tests/helpers/fuzz.ts):
 *
 *   npx tsx scripts/fuzz.ts [--cases 10000] [--seed 1] [--from 0] [--time-limit-ms 5000]
 *
 * `--from K` starts at case K (each case draws from its own fork of the seed, so case K is the same
 * whether or not the cases before it ran): a failing case of a long run is replayed alone.
 *
 * Prints one line per failing case and a summary (cases, outcomes, exit codes, slowest case); exits 1
 * when any case failed. A case that never returns is caught by a watchdog thread, which prints the case
 * index and kills the process.
 */
import { Worker } from "node:worker_threads";
import { isFailure, runFuzz, summarize } from "../tests/helpers/fuzz.js";

const say = (line: string): void => void process.stdout.write(line + "\n");
const arg = (name: string, def: string): string => {
  const i = process.argv.indexOf(name);
  return i >= 0 && process.argv[i + 1] !== undefined ? process.argv[i + 1] : def;
};
const cases = Number(arg("--cases", "10000"));
const seed = arg("--seed", "1");
const timeLimitMs = Number(arg("--time-limit-ms", "5000"));
const from = Number(arg("--from", "0"));

// Watchdog: the main thread stores the running case and its start time; a case that runs 60x the
// limit (sync hangs block timers) is reported and the process killed.
const shared = new Int32Array(new SharedArrayBuffer(8));
const watchdog = new Worker(
  `const { workerData } = require("node:worker_threads");
   const a = new Int32Array(workerData.buf);
   let last = -1, since = Date.now();
   setInterval(() => {
     const i = Atomics.load(a, 0);
     if (i !== last) { last = i; since = Date.now(); return; }
     if (i >= 0 && Date.now() - since > workerData.hangMs) {
       require("node:fs").writeSync(2, "HANG at case " + i + " (seed " + workerData.seed + ")\\n");
       process.kill(process.pid, "SIGKILL");
     }
   }, 500);`,
  { eval: true, workerData: { buf: shared.buffer, hangMs: timeLimitMs * 60, seed } },
);
watchdog.unref();

const t0 = Date.now();
let slowest = { ms: 0, index: -1 };
const result = await runFuzz({
  cases,
  seed,
  from,
  timeLimitMs,
  onCase(c) {
    Atomics.store(shared, 0, c.index + 1);
    if (c.ms > slowest.ms) slowest = { ms: c.ms, index: c.index };
    if (isFailure(c)) say(`FAIL case ${c.index} ${c.command} ${c.target}: ${c.outcome} (exit ${c.code}, ${c.ms.toFixed(0)} ms) ${c.firstLine}`);
    if ((c.index + 1 - from) % 500 === 0) process.stderr.write(`${c.index + 1 - from}/${cases} cases, ${((Date.now() - t0) / 1000).toFixed(0)} s\n`);
  },
});
const s = summarize(result);
say(`cases ${result.length}, seed ${seed}, ${((Date.now() - t0) / 1000).toFixed(1)} s`);
say(`outcomes ${JSON.stringify(s.outcomes)}`);
say(`exit codes ${JSON.stringify(s.exitCodes)}`);
say(`slowest case ${slowest.index}: ${slowest.ms.toFixed(0)} ms`);
process.exitCode = result.some(isFailure) ? 1 : 0;
