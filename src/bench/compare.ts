/**
 * Bench entry "compare": runs per second of a 4-variant x 16-seed sweep (assay-carousel, its four
 * reward variants, q-learning) with 1 and 2 local worker threads, and through Redis with 2
 * `gapwatch worker` processes (concurrency 1 each). Targets (reported, not enforced): 2 threads
 * >= 1.7x the runs/s of 1 thread on 2 cores; Redis with 2 workers within 15% of 2 local threads.
 *
 *   node dist/src/bench/compare.js [--rounds N] [--steps N] [--seeds N] [--redis redis://127.0.0.1:PORT/0]
 *
 * Runs as its own process (main.ts spawns it). Without --redis it starts its own redis-server on a
 * free 127.0.0.1 port (persistence off) and stops it at the end. Each round times the three set-ups in
 * turn (interleaved, so drift of the shared machine hits all three); the figures are medians over
 * rounds. Timed: `runCompare` from first job to comparison written (local: including thread start-up;
 * Redis: two workers started before the clock and idle, each round on a fresh queue so no result is reused).
 * CHECK: every set-up must produce the same run ids, checkpoints.jsonl bytes and statistics.
 */
import { spawn, spawnSync, type ChildProcess } from "node:child_process";
import { mkdtempSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { dirname, join, resolve } from "node:path";
import { fileURLToPath } from "node:url";
import { readdirSync, readFileSync, existsSync } from "node:fs";
import { createHash } from "node:crypto";
import { runCompare } from "../batch/compare.js";
import { startRedis } from "../batch/redis-server.js";
import { formatError, InputError } from "../errors.js";
import { median } from "./harness.js";

const out = (line = ""): void => {
  process.stdout.write(line + "\n");
};

const ENV = "assay-carousel";
const REWARDS = ["default", "shaped", "belt-travel", "belt-travel-energy"];

interface Args {
  rounds: number;
  steps: number;
  seeds: number;
  redis?: string;
}

function parseArgs(argv: string[]): Args {
  const a: Args = { rounds: 2, steps: 768_000, seeds: 16 };
  for (let i = 0; i < argv.length; i++) {
    const k = argv[i];
    const v = argv[i + 1];
    const int = () => {
      const n = Number(v);
      if (!Number.isInteger(n) || n < 1) throw new InputError("cli.benchOption", `${k} needs a positive integer, got ${v ?? "nothing"}`, k);
      i++;
      return n;
    };
    if (k === "--rounds") a.rounds = int();
    else if (k === "--steps") a.steps = int();
    else if (k === "--seeds") a.seeds = int();
    else if (k === "--redis") {
      if (!v) throw new InputError("cli.benchOption", "--redis needs a URL", k);
      a.redis = v;
      i++;
    } else if (k === "--quick") a.rounds = 1;
    else throw new InputError("cli.benchOption", `unknown option ${k}; usage: compare.js [--rounds N] [--steps N] [--seeds N] [--redis URL] [--quick]`, "bench compare");
  }
  return a;
}

function cliMain(): string {
  // dist/src/bench/compare.js -> dist/src/cli/main.js (src/... when run through tsx)
  const here = dirname(fileURLToPath(import.meta.url));
  return resolve(here, "../cli", fileURLToPath(import.meta.url).endsWith(".ts") ? "main.ts" : "main.js");
}

async function startWorkers(url: string, n: number): Promise<ChildProcess[]> {
  const main = cliMain();
  const pre = main.endsWith(".ts") ? ["--import", "tsx"] : [];
  const kids: ChildProcess[] = [];
  const readies: Promise<void>[] = [];
  for (let i = 0; i < n; i++) {
    const c = spawn(process.execPath, [...pre, main, "worker", "--queue", url, "--concurrency", "1"], { stdio: ["ignore", "ignore", "pipe"] });
    kids.push(c);
    readies.push(
      new Promise((res, rej) => {
        let buf = "";
        c.stderr?.on("data", (d) => {
          buf += d.toString();
          if (/ worker \d+ on redis:/.test(buf)) res();
        });
        c.once("exit", (code) => rej(new Error(`worker exited with ${code}: ${buf}`)));
      }),
    );
  }
  await Promise.all(readies);
  return kids;
}

/** Hash of every run's id, checkpoints.jsonl bytes and final scores, plus the statistics. */
function fingerprint(runsDir: string, stats: unknown): string {
  const h = createHash("sha256");
  for (const name of readdirSync(runsDir).sort()) {
    const d = join(runsDir, name);
    if (name.startsWith(".") || !existsSync(join(d, "manifest.json"))) continue;
    h.update(name + "\n" + readFileSync(join(d, "checkpoints.jsonl"), "utf8") + JSON.stringify(JSON.parse(readFileSync(join(d, "summary.json"), "utf8")).final));
  }
  h.update(JSON.stringify(stats));
  return h.digest("hex").slice(0, 16);
}

export async function benchCompare(args: Args): Promise<{ ok: boolean; summary: string[] }> {
  const seeds = Array.from({ length: args.seeds }, (_, i) => i + 1);
  const total = REWARDS.length * seeds.length;
  const own = args.redis ? null : await startRedis();
  const url = args.redis ?? own!.url();
  let workers: ChildProcess[] = [];
  const times: Record<string, number[]> = { local1: [], local2: [], redis2: [] };
  const prints = new Set<string>();
  try {
    out(`## compare: ${ENV} ${REWARDS.length} variants x ${seeds.length} seeds = ${total} runs, q-learning, ${args.steps} steps each; redis ${url}`);
    for (let round = 0; round < args.rounds; round++) {
      for (const setup of ["local1", "local2", "redis2"] as const) {
        const runsDir = mkdtempSync(join(tmpdir(), "gapwatch-bench-compare-"));
        try {
          // Each Redis round on a fresh queue (a resubmitted sweep would be answered from stored results).
          const base = new URL(url);
          base.searchParams.set("queue", `bench-${process.pid}-${round}`);
          if (setup === "redis2") workers = await startWorkers(base.toString(), 2);
          const t0 = process.hrtime.bigint();
          const r = await runCompare({
            env: ENV,
            rewards: REWARDS,
            learners: ["q-learning"],
            seeds,
            steps: args.steps,
            runsDir,
            bootstrapSeed: 0,
            reps: 2000,
            ...(setup === "redis2" ? { queue: base.toString() } : { workers: setup === "local1" ? 1 : 2 }),
          });
          const secs = Number(process.hrtime.bigint() - t0) / 1e9;
          if (r.stats.failed.length) throw new Error(`${r.stats.failed.length} runs failed: ${r.stats.failed[0].message}`);
          times[setup].push(secs);
          const fp = fingerprint(runsDir, r.stats);
          prints.add(fp);
          out(`   round ${round + 1} ${setup.padEnd(7)} ${secs.toFixed(2).padStart(7)} s  ${(total / secs).toFixed(1).padStart(6)} runs/s  check ${fp}`);
        } finally {
          rmSync(runsDir, { recursive: true, force: true });
          for (const w of workers.splice(0)) w.kill("SIGTERM");
        }
      }
    }
  } finally {
    for (const w of workers) w.kill("SIGTERM");
    await own?.stop();
  }
  const rate = (k: string) => total / median(times[k]);
  const scaling = rate("local2") / rate("local1");
  const overhead = median(times.redis2) / median(times.local2) - 1;
  const ok = prints.size === 1;
  out(`   runs/s: 1 thread ${rate("local1").toFixed(1)}, 2 threads ${rate("local2").toFixed(1)}, redis 2 workers ${rate("redis2").toFixed(1)}`);
  out(ok ? `   CHECK compare identical across set-ups ${[...prints][0]}` : `   CHECK MISMATCH between set-ups: ${[...prints].join(" ")}`);
  out();
  return {
    ok,
    summary: [
      `compare: 2 threads / 1 thread = x${scaling.toFixed(2)} (target >= x1.70: ${scaling >= 1.7 ? "met" : "NOT met"})`,
      `compare: redis 2 workers vs 2 local threads: ${(100 * overhead).toFixed(1)}% overhead (target < 15%: ${overhead < 0.15 ? "met" : "NOT met"})`,
    ],
  };
}

/** main.ts entry: the sweep runs in a child process (async code, own event loop); its report is echoed. */
export const compareEntry = {
  name: "compare",
  title: "batch comparison: runs/s with 1 and 2 local threads and through Redis with 2 worker processes",
  run(ctx: { opts: { quick: boolean } }): { ok: boolean; summary: string[] } {
    const self = fileURLToPath(import.meta.url);
    const argv = [...(self.endsWith(".ts") ? ["--import", "tsx"] : []), self, ...(ctx.opts.quick ? ["--quick"] : []), "--child-json"];
    const r = spawnSync(process.execPath, argv, { encoding: "utf8", stdio: ["ignore", "pipe", "inherit"], maxBuffer: 1 << 24 });
    const lines = (r.stdout ?? "").split("\n");
    const last = lines.filter((l) => l.startsWith("RESULT ")).pop();
    for (const l of lines) if (l && !l.startsWith("RESULT ")) out(l);
    if (r.status !== 0 || !last) return { ok: false, summary: [`compare: the bench child failed (exit ${r.status ?? r.signal})`] };
    return JSON.parse(last.slice("RESULT ".length)) as { ok: boolean; summary: string[] };
  },
};

if (process.argv[1] && fileURLToPath(import.meta.url) === resolve(process.argv[1])) {
  const argv = process.argv.slice(2);
  const childJson = argv.includes("--child-json");
  benchCompare(parseArgs(argv.filter((a) => a !== "--child-json"))).then(
    (r) => {
      if (childJson) out(`RESULT ${JSON.stringify(r)}`);
      else for (const s of r.summary) out(`   ${s}`);
      process.exit(r.ok ? 0 : 1);
    },
    (err) => {
      process.stderr.write(formatError(err) + "\n");
      process.exit(err instanceof InputError ? 2 : 1);
    },
  );
}
