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
import { QL_SEED, QL_STEPS, runLavaQl, runLavaVi, runLavaViParallel } from "./lava-run.js";
import { compareEntry } from "./compare.js";
import { reportEntry } from "./report.js";
import { monitorEntry } from "./monitor.js";
import { auditEntry } from "./audit.js";
import {
  checkKey,
  defaultPeersDir,
  oursImpl,
  peerImpls,
  readExpected,
  runCommand,
  setupPeers,
  type Impl,
  type PeerSetup,
  type Workload,
} from "./peers.js";

const out = (line = ""): void => {
  process.stdout.write(line + "\n");
};

export interface BenchOptions {
  quick: boolean;
  runs: number;
  warmup: number;
  only: string[];
  slow: boolean;
  peersDir: string;
}

interface Context {
  opts: BenchOptions;
  peers: PeerSetup;
  ours: Impl;
  /** Our VI sweeps on PAR_THREADS threads: its own row, never merged with the single-thread one. */
  oursPar: Impl;
  /** Our Q-learning after an untimed JIT warm-up on another problem: its own row, never merged. */
  oursWarm: Impl;
  expected: Map<string, string>;
}

/** Threads of the "gapwatch-2t" row (every other row, peers included, runs on one thread). */
export const PAR_THREADS = 2;
const PAR_NAME = `gapwatch-${PAR_THREADS}t`;

/** The parallel row: VI only, at 128x128 and up (below that a sweep is too short to split). */
function oursParImpl(mainJs: string): Impl {
  return {
    name: PAR_NAME,
    slowAt512: false,
    command: (w) => (w.kind === "vi" && w.W * w.H >= 128 * 128 ? [process.execPath, mainJs, "--child", "vi-par", String(w.W), String(w.H)] : null),
  };
}

const WARM_NAME = "gapwatch-warm";
/** The untimed warm-up of the "gapwatch-warm" row: the same learner code on a different, small grid. */
const WARM_W = 8;
const WARM_STEPS = 2_000_000;

/** The warm row: Q-learning only. The warm-up trains on an 8x8 grid before the clock starts. */
function oursWarmImpl(mainJs: string): Impl {
  return {
    name: WARM_NAME,
    slowAt512: false,
    command: (w) => (w.kind === "ql" ? [process.execPath, mainJs, "--child", "ql-warm", String(w.W), String(w.H), String(w.steps), String(w.seed)] : null),
  };
}

interface Row {
  impl: string;
  runs: number;
  /** Median in-process seconds of the timed region. */
  seconds: number;
  min: number;
  max: number;
  wall: number;
  /** Median of per-round ratios this / C and this / numpy-shift (NaN when absent). */
  vsC: number;
  vsNumpy: number;
  check: string;
  ok: boolean;
}

interface WorkloadResult {
  title: string;
  workload: Workload;
  rows: Row[];
  reference: string;
}

export interface BenchEntry {
  name: string;
  title: string;
  run(ctx: Context): { ok: boolean; summary: string[] };
}

const median = (xs: number[]): number => {
  const s = [...xs].sort((a, b) => a - b);
  const n = s.length;
  return n === 0 ? NaN : n % 2 ? s[(n - 1) / 2] : (s[n / 2 - 1] + s[n / 2]) / 2;
};

/** Run ours and every applicable peer on one workload in interleaved rounds; check the checksums. */
function measure(ctx: Context, title: string, w: Workload): WorkloadResult {
  const big = w.W * w.H >= 512 * 512;
  const impls = [ctx.ours, ctx.oursPar, ctx.oursWarm, ...peerImpls(ctx.peers)].filter((impl) => {
    if (impl.command(w) === null) return false;
    if (impl.slowAt512 && big && !ctx.opts.slow) return false;
    if (ctx.opts.quick && impl.slowAt512) return false;
    return true;
  });
  const runsOf = (impl: Impl) => (impl.slowAt512 && big ? 1 : ctx.opts.runs);
  const warmOf = (impl: Impl) => (impl.slowAt512 && big ? 0 : ctx.opts.warmup);
  const res = new Map(impls.map((i) => [i.name, { checks: [] as string[], secs: [] as number[], walls: [] as number[] }]));
  const maxWarm = Math.max(0, ...impls.map(warmOf));
  for (let r = 0; r < maxWarm; r++) for (const impl of impls) if (r < warmOf(impl)) runCommand(impl.command(w) as string[]);
  const maxRuns = Math.max(...impls.map(runsOf));
  for (let r = 0; r < maxRuns; r++) {
    for (const impl of impls) {
      if (r >= runsOf(impl)) continue;
      const o = runCommand(impl.command(w) as string[]);
      const rec = res.get(impl.name)!;
      rec.checks.push(o.check);
      rec.secs.push(o.seconds);
      rec.walls.push(o.wall);
    }
  }
  const expected = ctx.expected.get(checkKey(res.get(impls[0].name)!.checks[0]));
  const c = res.get("c");
  const np = res.get("numpy-shift");
  const reference = expected ?? c?.checks[0] ?? res.get(ctx.ours.name)!.checks[0];
  const ratio = (mine: number[], base: number[] | undefined) =>
    base && base.length ? median(mine.map((x, i) => x / base[Math.min(i, base.length - 1)])) : NaN;
  const rows: Row[] = impls.map((impl) => {
    const rec = res.get(impl.name)!;
    return {
      impl: impl.name,
      runs: rec.secs.length,
      seconds: median(rec.secs),
      min: Math.min(...rec.secs),
      max: Math.max(...rec.secs),
      wall: median(rec.walls),
      vsC: ratio(rec.secs, c?.secs),
      vsNumpy: ratio(rec.secs, np?.secs),
      check: rec.checks[0],
      ok: rec.checks.every((x) => x === reference),
    };
  });
  return { title, workload: w, rows, reference };
}

const fmtRatio = (x: number): string => (Number.isFinite(x) ? `x${x.toFixed(2)}` : "-");
const fmtSec = (x: number): string => (x >= 10 ? x.toFixed(2) : x >= 1 ? x.toFixed(3) : x.toFixed(4));
const fmtRate = (x: number): string => (x >= 1e6 ? `${(x / 1e6).toFixed(1)}M` : x >= 1e3 ? `${(x / 1e3).toFixed(1)}k` : x.toFixed(0));
const pad = (s: string, n: number): string => (s.length >= n ? s : s + " ".repeat(n - s.length));
const lpad = (s: string, n: number): string => (s.length >= n ? s : " ".repeat(n - s.length) + s);

function printTable(r: WorkloadResult): void {
  const w = r.workload;
  const iters = w.kind === "vi" ? Number(/iters=(\d+)/.exec(r.reference)?.[1] ?? NaN) : NaN;
  out(`## ${r.title}`);
  const head =
    w.kind === "vi"
      ? [pad("impl", 13), lpad("runs", 4), lpad("solve_s", 9), lpad("[min..max]", 19), lpad("ms/sweep", 9), lpad("cells/s", 8), lpad("vs C", 7), lpad("vs numpy", 9), lpad("wall_s", 8), "  checksum"]
      : [pad("impl", 13), lpad("runs", 4), lpad("train_s", 9), lpad("[min..max]", 19), lpad("steps/s", 9), lpad("speed/C", 8), lpad("vs C", 7), lpad("", 9), lpad("wall_s", 8), "  checksum"];
  out(head.join(" "));
  for (const row of r.rows) {
    const range = `[${fmtSec(row.min)}..${fmtSec(row.max)}]`;
    const cells =
      w.kind === "vi"
        ? [
            pad(row.impl, 13),
            lpad(String(row.runs), 4),
            lpad(fmtSec(row.seconds), 9),
            lpad(range, 19),
            lpad(((row.seconds / iters) * 1e3).toFixed(3), 9),
            lpad(fmtRate((iters * w.W * w.H) / row.seconds), 8),
            lpad(fmtRatio(row.vsC), 7),
            lpad(fmtRatio(row.vsNumpy), 9),
          ]
        : [
            pad(row.impl, 13),
            lpad(String(row.runs), 4),
            lpad(fmtSec(row.seconds), 9),
            lpad(range, 19),
            lpad(fmtRate(w.steps / row.seconds), 9),
            lpad(Number.isFinite(row.vsC) ? (1 / row.vsC).toFixed(2) : "-", 8),
            lpad(fmtRatio(row.vsC), 7),
            lpad("", 9),
          ];
    out([...cells, lpad(fmtSec(row.wall), 8), row.ok ? "  OK" : "  MISMATCH"].join(" "));
    if (!row.ok) out(`     got:      ${row.check}\n     expected: ${r.reference}`);
  }
  out(`   ${r.reference}`);
  const ours = r.rows.find((x) => x.impl === "gapwatch");
  if (ours) out(`   ours: ${ours.check}`);
  if (r.rows.some((x) => x.impl === PAR_NAME)) {
    out(`   ${PAR_NAME}: the same sweeps on ${PAR_THREADS} threads (solve/parallel.ts); every other row uses 1 thread. Thread start-up and`);
    out(`   the shared-memory table copy are outside solve_s, like table building for all rows (wall_s includes them).`);
  }
  if (r.rows.some((x) => x.impl === WARM_NAME)) {
    out(`   ${WARM_NAME}: the same call after an untimed warm-up (${WARM_STEPS / 1e6}M steps on a ${WARM_W}x${WARM_W} grid in the same process) so the JIT has`);
    out(`   compiled the loop; "gapwatch" (cold, like every peer) is the figure the target is judged on.`);
  }
  out();
}

function oursRow(r: WorkloadResult): Row | undefined {
  return r.rows.find((x) => x.impl === "gapwatch");
}

const viEntry: BenchEntry = {
  name: "vi",
  title: "value iteration (generic valueIteration sweeps on the lava FiniteModel)",
  run(ctx) {
    const sizes = ctx.opts.quick ? [32, 128] : [32, 128, 512];
    let ok = true;
    const summary: string[] = [];
    let last: WorkloadResult | undefined;
    for (const n of sizes) {
      const r = measure(ctx, `vi ${n}x${n}  (timed: sweeps only)`, { kind: "vi", W: n, H: n });
      printTable(r);
      ok = ok && r.rows.every((x) => x.ok);
      last = r;
    }
    const o = last && oursRow(last);
    if (last && o) {
      const n = last.workload.W;
      const vsNp = Number.isFinite(o.vsNumpy) ? `${fmtRatio(o.vsNumpy)} numpy-shift (target <= x1.00: ${o.vsNumpy <= 1 ? "met" : "NOT met"})` : "numpy n/a";
      const vsC = Number.isFinite(o.vsC) ? `${fmtRatio(o.vsC)} C (target <= x3.00: ${o.vsC <= 3 ? "met" : "NOT met"})` : "C n/a";
      summary.push(`vi ${n}x${n}: ours ${fmtSec(o.seconds)} s = ${vsC}; ${vsNp}`);
    }
    const par = last?.rows.find((x) => x.impl === PAR_NAME);
    if (last && par) {
      const n = last.workload.W;
      summary.push(
        `vi ${n}x${n}: ${PAR_NAME} (${PAR_THREADS} threads, opt-in; not the single-thread target) ${fmtSec(par.seconds)} s = ${fmtRatio(par.vsC)} C, ${fmtRatio(par.vsNumpy)} numpy-shift`,
      );
    }
    return { ok, summary };
  },
};

const qlEntry: BenchEntry = {
  name: "ql",
  title: "tabular Q-learning (policies/qlearning.ts trainQLearning on the lava FiniteModel)",
  run(ctx) {
    const r = measure(ctx, `ql 32x32 ${QL_STEPS} steps  (timed: the training call)`, { kind: "ql", W: 32, H: 32, steps: QL_STEPS, seed: QL_SEED });
    printTable(r);
    const o = oursRow(r);
    const summary: string[] = [];
    if (o && Number.isFinite(o.vsC)) {
      const speed = 1 / o.vsC;
      summary.push(`ql 32x32: ours ${fmtRate(QL_STEPS / o.seconds)} steps/s = ${speed.toFixed(2)}x C's speed (target >= 0.50: ${speed >= 0.5 ? "met" : "NOT met"})`);
    }
    const warm = r.rows.find((x) => x.impl === WARM_NAME);
    if (warm && Number.isFinite(warm.vsC)) {
      summary.push(`ql 32x32: ${WARM_NAME} (after an untimed warm-up; not the cold target) ${fmtRate(QL_STEPS / warm.seconds)} steps/s = ${(1 / warm.vsC).toFixed(2)}x C's speed`);
    }
    return { ok: r.rows.every((x) => x.ok), summary };
  },
};

/** The benchmark's entries, in run order. */
export const ENTRIES: BenchEntry[] = [viEntry, qlEntry, monitorEntry, reportEntry, auditEntry, compareEntry];

const USAGE =
  "usage: main.js [--quick] [--runs N] [--warmup N] [--only NAME,...] [--slow] [--peers DIR]\n" +
  "       main.js --child vi W H | --child vi-par W H | --child ql W H STEPS SEED | --child ql-warm W H STEPS SEED\n" +
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
  if (!(mode === "vi" || mode === "vi-par" || mode === "ql" || mode === "ql-warm") || nums.some((x) => !Number.isInteger(x))) throw new InputError("cli.benchOption", USAGE, "--child");
  const [W = 32, H = 32] = nums;
  if (mode === "vi-par") {
    return runLavaViParallel(W, H, PAR_THREADS).then((r) => {
      out(r.check);
      out(`${viTimeLine(PAR_NAME, r.iters, W * H, r.seconds)} threads=${r.threads} setup_s=${r.setupSeconds.toFixed(6)}`);
    });
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
    const ctx: Context = { opts, peers, ours: oursImpl(self), oursPar: oursParImpl(self), oursWarm: oursWarmImpl(self), expected: readExpected(opts.peersDir) };
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
