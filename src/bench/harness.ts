/**
 * The benchmark harness (src/bench/main.ts runs it): the context and entry types, the interleaved
 * measurement of ours and the peer programs on one workload with its checksum comparison, the table
 * printer, and the one `median` every entry uses.
 */
import { viCheckClose } from "./check.js";
import { checkKey, runCommand, peerImpls, type Impl, type PeerSetup, type Workload } from "./peers.js";

export const out = (line = ""): void => {
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

export interface Context {
  opts: BenchOptions;
  peers: PeerSetup;
  ours: Impl;
  /** Our VI sweeps on PAR_THREADS threads: its own row, never merged with the single-thread one. */
  oursPar: Impl;
  /** Our Q-learning after an untimed JIT warm-up on another problem: its own row, never merged. */
  oursWarm: Impl;
  /** The component-wise engine on VI workloads: its own row, values within 1e-8, not bit-identical. */
  oursEngine: Impl;
  expected: Map<string, string>;
}

/** Threads of the "gapwatch-2t" row (every other row, peers included, runs on one thread). */
export const PAR_THREADS = 2;
export const PAR_NAME = `gapwatch-${PAR_THREADS}t`;

/** The parallel row: VI only, at 128x128 and up (below that a sweep is too short to split). */
export function oursParImpl(mainJs: string): Impl {
  return {
    name: PAR_NAME,
    slowAt512: false,
    command: (w) => (w.kind === "vi" && w.W * w.H >= 128 * 128 ? [process.execPath, mainJs, "--child", "vi-par", String(w.W), String(w.H)] : null),
  };
}

export const ENGINE_NAME = "gapwatch-engine";

/** The engine row: VI only; plan + solve timed (time to solution); checked by `viCheckClose`. */
export function oursEngineImpl(mainJs: string): Impl {
  return {
    name: ENGINE_NAME,
    slowAt512: false,
    command: (w) => (w.kind === "vi" ? [process.execPath, mainJs, "--child", "vi-engine", String(w.W), String(w.H)] : null),
    matches: (check, reference) => viCheckClose(check, reference, 1e-8),
  };
}

export const WARM_NAME = "gapwatch-warm";
/** The untimed warm-up of the "gapwatch-warm" row: the same learner code on a different, small grid. */
export const WARM_W = 8;
export const WARM_STEPS = 2_000_000;

/** The warm row: Q-learning only. The warm-up trains on an 8x8 grid before the clock starts. */
export function oursWarmImpl(mainJs: string): Impl {
  return {
    name: WARM_NAME,
    slowAt512: false,
    command: (w) => (w.kind === "ql" ? [process.execPath, mainJs, "--child", "ql-warm", String(w.W), String(w.H), String(w.steps), String(w.seed)] : null),
  };
}

export interface Row {
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

export interface WorkloadResult {
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

/** Median of a sample (mean of the two middle values when n is even); NaN when empty. */
export const median = (xs: number[]): number => {
  const s = [...xs].sort((a, b) => a - b);
  const n = s.length;
  return n === 0 ? NaN : n % 2 ? s[(n - 1) / 2] : (s[n / 2 - 1] + s[n / 2]) / 2;
};

/** Run ours and every applicable peer on one workload in interleaved rounds; check the checksums. */
export function measure(ctx: Context, title: string, w: Workload): WorkloadResult {
  const big = w.W * w.H >= 512 * 512;
  const impls = [ctx.ours, ctx.oursPar, ctx.oursEngine, ctx.oursWarm, ...peerImpls(ctx.peers)].filter((impl) => {
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
    const agrees = impl.matches ?? ((x: string, ref: string) => x === ref);
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
      ok: rec.checks.every((x) => agrees(x, reference)),
    };
  });
  return { title, workload: w, rows, reference };
}

export const fmtRatio = (x: number): string => (Number.isFinite(x) ? `x${x.toFixed(2)}` : "-");
export const fmtSec = (x: number): string => (x >= 10 ? x.toFixed(2) : x >= 1 ? x.toFixed(3) : x.toFixed(4));
export const fmtRate = (x: number): string => (x >= 1e6 ? `${(x / 1e6).toFixed(1)}M` : x >= 1e3 ? `${(x / 1e3).toFixed(1)}k` : x.toFixed(0));
const pad = (s: string, n: number): string => (s.length >= n ? s : s + " ".repeat(n - s.length));
const lpad = (s: string, n: number): string => (s.length >= n ? s : " ".repeat(n - s.length) + s);

export function printTable(r: WorkloadResult): void {
  const w = r.workload;
  const iters = w.kind === "vi" ? Number(/iters=(\d+)/.exec(r.reference)?.[1] ?? NaN) : NaN;
  out(`## ${r.title}`);
  const head =
    w.kind === "vi"
      ? [pad("impl", 15), lpad("runs", 4), lpad("solve_s", 9), lpad("[min..max]", 19), lpad("ms/sweep", 9), lpad("cells/s", 8), lpad("vs C", 7), lpad("vs numpy", 9), lpad("wall_s", 8), "  checksum"]
      : [pad("impl", 15), lpad("runs", 4), lpad("train_s", 9), lpad("[min..max]", 19), lpad("steps/s", 9), lpad("speed/C", 8), lpad("vs C", 7), lpad("", 9), lpad("wall_s", 8), "  checksum"];
  out(head.join(" "));
  for (const row of r.rows) {
    const range = `[${fmtSec(row.min)}..${fmtSec(row.max)}]`;
    const cells =
      w.kind === "vi"
        ? [
            pad(row.impl, 15),
            lpad(String(row.runs), 4),
            lpad(fmtSec(row.seconds), 9),
            lpad(range, 19),
            lpad(((row.seconds / iters) * 1e3).toFixed(3), 9),
            lpad(fmtRate((iters * w.W * w.H) / row.seconds), 8),
            lpad(fmtRatio(row.vsC), 7),
            lpad(fmtRatio(row.vsNumpy), 9),
          ]
        : [
            pad(row.impl, 15),
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
  if (r.rows.some((x) => x.impl === ENGINE_NAME)) {
    out(`   ${ENGINE_NAME}: the default exact solver (solve/engine: components, Gauss-Seidel, proven bound 1e-10); solve_s is time to`);
    out(`   solution (plan + solve); ms/sweep and cells/s use the synchronous sweep count; its CHECK agrees within 1e-8, not bit for bit.`);
  }
  if (r.rows.some((x) => x.impl === WARM_NAME)) {
    out(`   ${WARM_NAME}: the same call after an untimed warm-up (${WARM_STEPS / 1e6}M steps on a ${WARM_W}x${WARM_W} grid in the same process) so the JIT has`);
    out(`   compiled the loop; "gapwatch" (cold, like every peer) is the figure the target is judged on.`);
  }
  out();
}

export function oursRow(r: WorkloadResult): Row | undefined {
  return r.rows.find((x) => x.impl === "gapwatch");
}
