/**
 * `npm run bench` (after `npm run build`): the benchmark, our code side by side with the peer
 * programs of shared/bench/peers on the "open field with lava" problem (shared/bench/PROBLEM.md).
 *
 *   node dist/src/bench/main.js [--quick] [--runs N] [--only vi,ql] [--slow] [--peers DIR]
 *
 * Every implementation, ours included, runs as its own process (ours: this file with `--child`),
 * so start-up and JIT warm-up are treated alike; interleaved rounds (one uncounted warm-up round,
 * then N counted) and per-round ratios to C keep figures meaningful when the shared machine's speed
 * drifts. Each program reports the time of its timed region itself (PROBLEM.md section 7; ours: see
 * lava-run.ts), and the table shows medians. Every CHECK line must agree with C's and with
 * peers/expected.txt; a mismatch makes the run exit 1. Speed targets are reported, never enforced.
 *
 * Entries are named and selectable with --only; add new ones (monitor overhead, audit time, ...)
 * to `ENTRIES`.
 */
import { cpus, loadavg } from "node:os";
import { fileURLToPath } from "node:url";
import { formatError, InputError } from "../errors.js";
import { qlTimeLine, viTimeLine } from "./check.js";
import { QL_SEED, QL_STEPS, runLavaQl, runLavaVi, runLavaViEngine, runLavaViParallel } from "./lava-run.js";
import { compareEntry } from "./compare.js";
import { reportEntry } from "./report.js";
import { monitorEntry } from "./monitor.js";
import { auditEntry, lavaAuditEntry } from "./audit.js";
import { bigModelEntry } from "./big-model.js";
import { layoutsEntry } from "./layouts.js";
import { startupEntry } from "./startup.js";
import { ENGINE_NAME, out, oursEngineImpl, oursParImpl, oursWarmImpl, PAR_NAME, PAR_THREADS, WARM_NAME, WARM_STEPS, WARM_W, type BenchEntry, type BenchOptions, type Context } from "./harness.js";
import { qlEntry, viEntry } from "./lava-entries.js";
import { defaultPeersDir, oursImpl, readExpected, setupPeers } from "./peers.js";

/** The benchmark's entries, in run order. */
export const ENTRIES: BenchEntry[] = [viEntry, qlEntry, monitorEntry, reportEntry, auditEntry, lavaAuditEntry, compareEntry, startupEntry, layoutsEntry, bigModelEntry];

const USAGE =
  "usage: main.js [--quick] [--runs N] [--warmup N] [--only NAME,...] [--slow] [--peers DIR]\n" +
  "       main.js --child vi W H | --child vi-par W H | --child vi-engine W H | --child ql W H STEPS SEED | --child ql-warm W H STEPS SEED\n" +
  `entries: ${ENTRIES.map((e) => e.name).join(", ")}`;

export function parseBenchArgs(argv: string[]): BenchOptions {
  const opts: BenchOptions = { quick: false, runs: 3, warmup: 1, only: [], slow: false, peersDir: defaultPeersDir() };
  let runsGiven = false;
  let warmGiven = false;
  const intArg = (i: number, name: string): number => {
    const v = argv[i];
    const n = Number(v);
    if (v === undefined || !Number.isInteger(n) || n < 0) throw new InputError("cli.benchOption", `${name} needs a non-negative integer, got ${v ?? "nothing"}`, name);
    return n;
  };
  for (let i = 0; i < argv.length; i++) {
    const a = argv[i];
    if (a === "--quick") opts.quick = true;
    else if (a === "--slow") opts.slow = true;
    else if (a === "--runs") {
      opts.runs = Math.max(1, intArg(++i, "--runs"));
      runsGiven = true;
    } else if (a === "--warmup") {
      opts.warmup = intArg(++i, "--warmup");
      warmGiven = true;
    } else if (a === "--only") {
      const v = argv[++i] ?? "";
      opts.only = v.split(",").filter(Boolean);
      const unknown = opts.only.filter((n) => !ENTRIES.some((e) => e.name === n));
      if (unknown.length || opts.only.length === 0) {
        throw new InputError("cli.benchOption", `unknown entry "${unknown.join(",") || v}"; known: ${ENTRIES.map((e) => e.name).join(", ")}`, "--only");
      }
    } else if (a === "--peers") {
      const v = argv[++i];
      if (!v) throw new InputError("cli.benchOption", "--peers needs a folder", "--peers");
      opts.peersDir = v;
    } else throw new InputError("cli.benchOption", `unknown option ${a}\n${USAGE}`, "bench");
  }
  if (opts.quick) {
    if (!runsGiven) opts.runs = 1;
    if (!warmGiven) opts.warmup = 0;
  }
  return opts;
}

/** Child mode: run our implementation once and print CHECK and TIME like a peer program. */
function child(argv: string[]): void | Promise<void> {
  const [mode, ...rest] = argv;
  const nums = rest.map(Number);
  if (!(mode === "vi" || mode === "vi-par" || mode === "vi-engine" || mode === "ql" || mode === "ql-warm") || nums.some((x) => !Number.isInteger(x))) throw new InputError("cli.benchOption", USAGE, "--child");
  const [W = 32, H = 32] = nums;
  if (mode === "vi-par") {
    return runLavaViParallel(W, H, PAR_THREADS).then((r) => {
      out(r.check);
      out(`${viTimeLine(PAR_NAME, r.iters, W * H, r.seconds)} threads=${r.threads} setup_s=${r.setupSeconds.toFixed(6)}`);
    });
  }
  if (mode === "vi-engine") {
    const r = runLavaViEngine(W, H);
    out(r.check);
    out(`${viTimeLine(ENGINE_NAME, r.iters, W * H, r.seconds)} plan_s=${r.planSeconds.toFixed(6)} error_bound=${r.errorBound.toExponential(2)}`);
    return;
  }
  if (mode === "vi") {
    const r = runLavaVi(W, H);
    out(r.check);
    out(viTimeLine("gapwatch", r.iters, W * H, r.seconds));
  } else {
    const steps = nums[2] ?? QL_STEPS;
    const seed = nums[3] ?? QL_SEED;
    if (mode === "ql-warm") runLavaQl(WARM_W, WARM_W, WARM_STEPS, 1);
    const r = runLavaQl(W, H, steps, seed);
    out(r.check);
    out(qlTimeLine(mode === "ql-warm" ? WARM_NAME : "gapwatch", steps, r.seconds));
  }
}

export function main(argv: string[]): number | Promise<number> {
  const fail = (err: unknown): number => {
    process.stderr.write(formatError(err) + "\n");
    return err instanceof InputError ? 2 : 1;
  };
  try {
    if (argv[0] === "--child") {
      const done = child(argv.slice(1));
      return done ? done.then(() => 0, fail) : 0;
    }
    const opts = parseBenchArgs(argv);
    const peers = setupPeers(opts.peersDir);
    const self = fileURLToPath(import.meta.url);
    const ctx: Context = { opts, peers, ours: oursImpl(self), oursPar: oursParImpl(self), oursWarm: oursWarmImpl(self), oursEngine: oursEngineImpl(self), expected: readExpected(opts.peersDir) };
    out(`# gapwatch bench  ${new Date().toISOString().slice(0, 16)}Z  node ${process.version}  ${cpus().length} cores  peers ${opts.peersDir}`);
    // The machine may be shared: a load average above the core count means the figures are noisy.
    out(`# load average at start ${loadavg().map((x) => x.toFixed(2)).join(" ")}`);
    out(`# runs=${opts.runs} warmup=${opts.warmup}${opts.quick ? " quick" : ""}${opts.slow ? " slow" : ""}; times are medians of each program's own timed region; ratios are medians of per-round ratios`);
    for (const n of peers.notes) out(`# note: ${n}`);
    out();
    let ok = true;
    const summary: string[] = [];
    for (const e of ENTRIES) {
      if (opts.only.length && !opts.only.includes(e.name)) continue;
      out(`# entry ${e.name}: ${e.title}`);
      const r = e.run(ctx);
      ok = ok && r.ok;
      summary.push(...r.summary);
    }
    out(`# load average at end ${loadavg().map((x) => x.toFixed(2)).join(" ")}`);
    out("# targets (reported, not enforced)");
    for (const s of summary) out(`   ${s}`);
    out(ok ? "ALL CHECKSUMS MATCH" : "CHECKSUM MISMATCH FOUND");
    return ok ? 0 : 1;
  } catch (err) {
    return fail(err);
  }
}

if (process.argv[1] && fileURLToPath(import.meta.url) === process.argv[1]) {
  void Promise.resolve(main(process.argv.slice(2))).then((code) => {
    process.exitCode = code;
  });
}
