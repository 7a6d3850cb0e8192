/**
 * The distributed backend against a real redis-server (Debian's, started here on a free 127.0.0.1
 * port) and real `gapwatch worker` processes (node --import tsx src/cli/main.ts worker, so the test
 * needs no build). Checks: results identical to a local run; resubmitting a sweep does no work twice;
 * a model file given by path travels inside the job (the workers run in a folder without it); a worker
 * killed with SIGKILL mid-job loses nothing: its job is picked up by another worker.
 */
import { spawn, type ChildProcess } from "node:child_process";
import { readFileSync, rmSync } from "node:fs";
import { join, resolve } from "node:path";
import { pathToFileURL } from "node:url";
import { Queue } from "bullmq";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { runCompare } from "../../src/batch/compare.js";
import { parseQueueUrl } from "../../src/batch/queue.js";
import { openIndex } from "../../src/store/index-db.js";
import { startRedis, type RedisHandle } from "../setup/redis.js";
import { runFingerprints, tempDir } from "./helpers.js";

const ROOT = resolve(__dirname, "../..");
const MAIN = resolve(ROOT, "src/cli/main.ts");
// tsx's loader by absolute URL, so a worker can run in a folder without node_modules.
const TSX = pathToFileURL(resolve(ROOT, "node_modules/tsx/dist/loader.mjs")).href;

let redis: RedisHandle;
const workers: { child: ChildProcess; log: string[] }[] = [];
const dirs: string[] = [];
const fresh = (label: string) => {
  const d = tempDir(label);
  dirs.push(d);
  return d;
};

function startWorker(url: string, extra: string[] = [], cwd = ROOT) {
  const child = spawn(process.execPath, ["--import", TSX, MAIN, "worker", "--queue", url, "--concurrency", "1", ...extra], {
    cwd,
    env: { ...process.env, NODE_OPTIONS: "" },
    stdio: ["ignore", "ignore", "pipe"],
  });
  const w = { child, log: [] as string[] };
  let buf = "";
  child.stderr?.on("data", (d) => {
    buf += d.toString();
    const lines = buf.split("\n");
    buf = lines.pop() ?? "";
    w.log.push(...lines);
  });
  workers.push(w);
  return w;
}

async function until(cond: () => boolean | Promise<boolean>, ms = 60_000): Promise<void> {
  const t0 = Date.now();
  while (!(await cond())) {
    if (Date.now() - t0 > ms) throw new Error("timed out waiting");
    await new Promise((r) => setTimeout(r, 50));
  }
}

const ready = (w: { log: string[] }) => w.log.some((l) => / worker \d+ on redis:/.test(l));
const count = (w: { log: string[] }, kind: string) => w.log.filter((l) => l.split(" ")[1] === kind).length;

async function stopAll() {
  await Promise.all(
    workers.splice(0).map(
      (w) =>
        new Promise<void>((done) => {
          if (w.child.exitCode !== null || w.child.signalCode !== null) return done();
          w.child.once("exit", () => done());
          w.child.kill("SIGTERM");
        }),
    ),
  );
}

beforeAll(async () => {
  redis = await startRedis();
});

afterAll(async () => {
  await stopAll();
  await redis?.stop();
  for (const d of dirs) rmSync(d, { recursive: true, force: true });
});

const SWEEP = { env: "fresh-coat-tug", rewards: ["fast", "default"], learners: ["q-learning"], seeds: [1, 2, 3], steps: 4000, bootstrapSeed: 5, reps: 300 };

/**
 * A two-variant sweep on `env` run locally and through the queue at `url` (a worker must be up): no
 * run failed, `runs` runs, the same run files and statistics. Returns the queued comparison.
 */
async function sameAsLocal(url: string, spec: { env: string; seeds: number[] }, runs: number) {
  const sweep = { ...spec, rewards: ["default", "dawdle"], learners: ["q-learning"], steps: 600, bootstrapSeed: 1, reps: 200 };
  const local = fresh("queue-local");
  const remote = fresh("queue-remote");
  const rl = await runCompare({ ...sweep, runsDir: local, workers: 1 });
  const rr = await runCompare({ ...sweep, runsDir: remote, queue: url });
  expect(rr.stats.failed).toEqual([]);
  const fl = runFingerprints(local);
  expect(fl.size).toBe(runs);
  expect(runFingerprints(remote)).toEqual(fl);
  expect(JSON.stringify(rr.stats)).toBe(JSON.stringify(rl.stats));
  return rr;
}

describe("compare through Redis with worker processes", () => {
  it("two workers give the same runs and statistics as a local run; a resubmitted sweep does no work twice", async () => {
    const url = redis.url(0);
    const a = startWorker(url);
    const b = startWorker(url);
    await until(() => ready(a) && ready(b));
    const local = fresh("local");
    const remote = fresh("remote");
    const again = fresh("again");
    const rl = await runCompare({ ...SWEEP, runsDir: local, workers: 2 });
    const rr = await runCompare({ ...SWEEP, runsDir: remote, queue: url });
    const fl = runFingerprints(local);
    const fr = runFingerprints(remote);
    expect(fl.size).toBe(6);
    expect([...fr.keys()]).toEqual([...fl.keys()]);
    for (const [id, v] of fl) expect(fr.get(id)).toEqual(v);
    expect(JSON.stringify(rr.stats)).toBe(JSON.stringify(rl.stats));
    expect(rr.doc.config.backend).toBe("redis");
    // Both workers took part, and each job was processed exactly once.
    await until(() => count(a, "completed") + count(b, "completed") >= 6, 10_000);
    expect(count(a, "completed") + count(b, "completed")).toBe(6);
    expect(count(a, "completed")).toBeGreaterThan(0);
    expect(count(b, "completed")).toBeGreaterThan(0);
    // Same sweep again (into another runs folder): answered from the stored job results, no new work.
    const r3 = await runCompare({ ...SWEEP, runsDir: again, queue: url });
    expect(JSON.stringify(r3.stats)).toBe(JSON.stringify(rl.stats));
    expect(runFingerprints(again)).toEqual(fl);
    expect(count(a, "active") + count(b, "active")).toBe(6);
    const q = new Queue(parseQueueUrl(url).name, { connection: parseQueueUrl(url).connection });
    try {
      const counts = await q.getJobCounts("completed", "failed", "wait", "active");
      expect(counts).toEqual({ completed: 6, failed: 0, wait: 0, active: 0 });
    } finally {
      await q.close();
    }
    // The coordinator indexed every run it wrote.
    const ix = openIndex(remote);
    try {
      expect(ix.listRuns().length).toBe(6);
    } finally {
      ix.close();
    }
    await stopAll();
  });

  it("a model file given by path travels in the job: workers run where the file does not exist, run ids equal the local run's", async () => {
    const url = redis.url(1);
    const elsewhere = fresh("worker-cwd");
    const w = startWorker(url, [], elsewhere);
    await until(() => ready(w));
    const rr = await sameAsLocal(url, { env: "tests/fixtures/batch/corridor.json", seeds: [1, 2] }, 4);
    // The manifests name the file as the user gave it, not the worker's scratch copy.
    for (const o of rr.outcomes) if (o.ok) expect(o.result.config.env).toBe("tests/fixtures/batch/corridor.json");
    await stopAll();
  });

  it("a model-file family travels as the member its layout chose: a folder family (#1) and a comma list (#0), run ids equal the local run's", async () => {
    const url = redis.url(1);
    const elsewhere = fresh("worker-cwd-family");
    const w = startWorker(url, [], elsewhere);
    await until(() => ready(w));
    for (const env of ["tests/fixtures/batch/corridors#1", "tests/fixtures/batch/corridors/b-long.json,tests/fixtures/batch/corridor.json#0"]) {
      const rr = await sameAsLocal(url, { env, seeds: [1] }, 2);
      for (const o of rr.outcomes) {
        expect(o.ok).toBe(true);
        // The run names the family spec as the user gave it, and trained on the 4-state member.
        if (o.ok) {
          expect(o.result.config.env).toBe(env);
          const policy = JSON.parse(readFileSync(join(o.result.runDir, "policy.json"), "utf8")) as { greedy: unknown[] };
          expect(policy.greedy.length).toBe(4);
        }
      }
    }
    await stopAll();
  });

  it("fault: a worker killed with SIGKILL mid-job; another worker takes the job over and the sweep completes, nothing lost or duplicated", async () => {
    const url = redis.url(2);
    // Short lock and stalled-check interval so a dead worker's job is noticed within a few seconds.
    const fast = ["--lock-ms", "1500", "--stalled-ms", "500"];
    const victim = startWorker(url, fast);
    await until(() => ready(victim));
    // Runs long enough (~1 s each) to be killed in the middle of one.
    const sweep = { env: "fresh-coat-tug", rewards: ["default"], learners: ["q-learning"], seeds: [1, 2, 3], steps: 300_000, bootstrapSeed: 2, reps: 200 };
    const runsDir = fresh("fault");
    const done = runCompare({ ...sweep, runsDir, queue: url, backoffMs: 200 });
    await until(() => count(victim, "active") > 0);
    const killedJob = victim.log.find((l) => l.split(" ")[1] === "active")!.split(" ")[2];
    victim.child.kill("SIGKILL");
    await new Promise((r) => victim.child.once("exit", r));
    expect(count(victim, "completed")).toBe(0);
    const rescuer = startWorker(url, fast);
    const r = await done;
    expect(r.stats.failed).toEqual([]);
    expect(r.stats.variants[0].runs).toBe(3);
    // The killed job was processed by the second worker.
    expect(rescuer.log.some((l) => l.includes(`completed ${killedJob}`))).toBe(true);
    // (the worker logs a completion just after the coordinator hears of it)
    await until(() => count(rescuer, "completed") >= 3, 10_000);
    expect(count(rescuer, "completed")).toBe(3);
    // Nothing lost or duplicated: three run directories, three index rows, three completed jobs.
    expect(runFingerprints(runsDir).size).toBe(3);
    const ix = openIndex(runsDir);
    try {
      expect(ix.listRuns().length).toBe(3);
      expect(new Set(ix.listRuns().map((x) => x.seed))).toEqual(new Set([1, 2, 3]));
    } finally {
      ix.close();
    }
    const q = new Queue(parseQueueUrl(url).name, { connection: parseQueueUrl(url).connection });
    try {
      expect(await q.getJobCounts("completed", "failed")).toEqual({ completed: 3, failed: 0 });
    } finally {
      await q.close();
    }
    await stopAll();
  });
});
