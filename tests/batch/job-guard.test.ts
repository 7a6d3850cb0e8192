/**
 * Whatever crosses the queue is untrusted. Attacks reproduced against a real redis-server (Debian's, on
 * a free 127.0.0.1 port) with a real `gapwatch worker` process and, as the attacker, a BullMQ worker of
 * the test's own that answers jobs with planted results:
 * - a result whose run id is ".." or "." must not write into the parent of the runs folder, delete a
 *   user's files there, or overwrite runs/index.db; the coordinator refuses it and reports the run failed;
 * - a job that carries "payload.ts" and names it as its environment must not run on a genuine worker;
 *   only .json data files travel, and a module is loaded only from a folder given with --allow-modules.
 */
import { spawn, type ChildProcess } from "node:child_process";
import { existsSync, mkdirSync, readdirSync, readFileSync, symlinkSync, writeFileSync } from "node:fs";
import { join, resolve } from "node:path";
import { pathToFileURL } from "node:url";
import { Queue, QueueEvents, Worker } from "bullmq";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { runCompare } from "../../src/batch/compare.js";
import { checkJobForWorker, checkShippedRun, runFolderInside } from "../../src/batch/job-guard.js";
import { planSweep } from "../../src/batch/plan.js";
import { parseQueueUrl } from "../../src/batch/queue.js";
import type { BatchJob } from "../../src/batch/types.js";
import { openIndex } from "../../src/store/index-db.js";
import { startRedis, type RedisHandle } from "../setup/redis.js";
import { tempDirsRemovedAfterAll } from "../helpers/temp-dirs.js";

const ROOT = resolve(__dirname, "../..");
const MAIN = resolve(ROOT, "src/cli/main.ts");
const TSX = pathToFileURL(resolve(ROOT, "node_modules/tsx/dist/loader.mjs")).href;

const fresh = tempDirsRemovedAfterAll();

const jobOf = (over: Partial<BatchJob["input"]> = {}, files?: Record<string, string>): BatchJob => ({
  jobId: "run-test",
  input: { env: "fresh-coat-tug", reward: "fast", learner: "q-learning", seed: 1, steps: 400, ...over },
  ...(files ? { files } : {}),
  cell: { reward: String(over.reward ?? "fast"), learner: "q-learning", seed: 1 },
});
const code = (fn: () => unknown): string => {
  try {
    fn();
  } catch (e) {
    return (e as { code?: string }).code ?? "no code";
  }
  return "accepted";
};

describe("result checks on the coordinator (pure)", () => {
  it("a run folder must be a plain direct child of the runs folder", () => {
    const root = fresh("guard-root");
    for (const bad of ["", ".", "..", "../x", "a/b", "a\\..\\..", ".hidden", "/etc"]) expect(code(() => runFolderInside(root, bad))).toBe("batch.badResult");
    expect(runFolderInside(root, "fresh-coat-tug-fast-q-learning-s1-0123abcd")).toBe(join(root, "fresh-coat-tug-fast-q-learning-s1-0123abcd"));
  });

  it("a result must carry this job's run id and only run files", () => {
    const [job] = planSweep({ env: "fresh-coat-tug", rewards: ["fast"], learners: ["q-learning"], seeds: [3] });
    const files = { "manifest.json": "{}", "checkpoints.jsonl": "" };
    expect(code(() => checkShippedRun(job, { runId: "fresh-coat-tug-fast-q-learning-s3-0123abcd", files }))).toBe("accepted");
    for (const runId of ["..", ".", "fresh-coat-tug-fast-q-learning-s4-0123abcd", "fresh-coat-tug-fast-q-learning-s3-0123abcd/..", "fresh-coat-tug-fast-q-learning-s3-0123ABCD"]) {
      expect(code(() => checkShippedRun(job, { runId, files }))).toBe("batch.badResult");
    }
    for (const name of ["index.db", "../checkpoints.jsonl", "payload.ts", "__proto__"]) {
      expect(code(() => checkShippedRun(job, { runId: "fresh-coat-tug-fast-q-learning-s3-0123abcd", files: JSON.parse(`{"${name}": "x"}`) }))).toBe("batch.badResult");
    }
    expect(code(() => checkShippedRun(job, "a string"))).toBe("batch.badResult");
  });
});

describe("job checks on the worker (pure)", () => {
  it("only .json files travel, named by the config; modules only from allowed folders; size bounded", () => {
    const data = (job: BatchJob) => ({ format: "gapwatch-job/1", job });
    expect(code(() => checkJobForWorker(data(jobOf({ env: "payload.ts" }, { "payload.ts": "export default 1" }))))).toBe("batch.jobFile");
    expect(code(() => checkJobForWorker(data(jobOf({ env: "m.json" }, { "m.json": "{}", "other.json": "{}" }))))).toBe("batch.jobFile");
    expect(code(() => checkJobForWorker(data(jobOf({ reward: "evil.mjs" }))))).toBe("batch.jobFile");
    // A family member travels only as the file the job names in envFile; code never does.
    const family = (envFile: string, files: Record<string, string>) => data({ ...jobOf({ env: "fam#1" }, files), envFile });
    expect(code(() => checkJobForWorker(family("fam/b.json", { "fam/b.json": "{}" })))).toBe("accepted");
    expect(code(() => checkJobForWorker(family("fam/b.drn", { "fam/b.drn": "@model" })))).toBe("accepted");
    expect(code(() => checkJobForWorker(family("fam/b.json", { "fam/c.json": "{}" })))).toBe("batch.jobFile");
    expect(code(() => checkJobForWorker(family("fam/b.ts", { "fam/b.ts": "export default 1" })))).toBe("batch.jobFile");
    expect(code(() => checkJobForWorker(data(jobOf({ env: "m.json" }, { "m.json": "x".repeat(2000) })), { maxJobFileBytes: 1000 }))).toBe("batch.jobSize");
    expect(code(() => checkJobForWorker({ format: "other", job: {} }))).toBe("batch.job");
    const pump = resolve(ROOT, "examples/pump-station.ts");
    expect(code(() => checkJobForWorker(data(jobOf({ env: pump }))))).toBe("batch.moduleNotAllowed");
    expect(code(() => checkJobForWorker(data(jobOf({ env: pump })), { allowModules: [resolve(ROOT, "tests")] }))).toBe("batch.moduleNotAllowed");
    expect(code(() => checkJobForWorker(data(jobOf({ env: resolve(ROOT, "examples/../tests/fixtures/batch/hang-step.ts") })), { allowModules: [resolve(ROOT, "examples")] }))).toBe("batch.moduleNotAllowed");
    expect(code(() => checkJobForWorker(data(jobOf({ env: pump })), { allowModules: [resolve(ROOT, "examples")] }))).toBe("accepted");
    // A link inside an allowed folder that points outside it is judged by where it points.
    const allowed = fresh("allowed");
    symlinkSync(resolve(ROOT, "tests/fixtures/batch/hang-step.ts"), join(allowed, "link.ts"));
    expect(code(() => checkJobForWorker(data(jobOf({ env: join(allowed, "link.ts") })), { allowModules: [allowed] }))).toBe("batch.moduleNotAllowed");
    // Data files and built-in names pass.
    expect(code(() => checkJobForWorker(data(jobOf({ env: "m.json" }, { "m.json": "{}" }))))).toBe("accepted");
    expect(code(() => checkJobForWorker(data(jobOf())))).toBe("accepted");
  });
});

describe("attacks through a real Redis", () => {
  let redis: RedisHandle;
  const children: ChildProcess[] = [];
  beforeAll(async () => {
    redis = await startRedis();
  });
  afterAll(async () => {
    for (const c of children) if (c.exitCode === null && c.signalCode === null) c.kill("SIGKILL");
    await redis?.stop();
  });

  it("planted results with run ids '..' and '.' are refused: nothing written outside the run folders, the user's files and the index intact", async () => {
    const url = redis.url(3);
    const target = parseQueueUrl(url);
    const parent = fresh("victim");
    const runsDir = join(parent, "runs");
    mkdirSync(runsDir);
    // The user's own files beside the runs folder, and an index inside it.
    for (const f of ["checkpoints.jsonl", "alerts.jsonl", "policy.json"]) writeFileSync(join(parent, f), `mine: ${f}\n`);
    openIndex(runsDir).close();
    const indexBefore = readFileSync(join(runsDir, "index.db"));
    // The attacker's worker answers every job with a result that points outside the run folders.
    let n = 0;
    const evil = new Worker(
      target.name,
      async () => {
        n++;
        return n % 2 ? { runId: "..", files: { "checkpoints.jsonl": "planted\n" } } : { runId: ".", files: { "index.db": "planted", "manifest.json": "{}" } };
      },
      { connection: target.connection },
    );
    try {
      const r = await runCompare({ env: "fresh-coat-tug", rewards: ["fast", "default"], learners: ["q-learning"], seeds: [1], steps: 400, runsDir, queue: url, bootstrapSeed: 1, reps: 50 });
      expect(r.outcomes.every((o) => !o.ok && o.error.code === "batch.badResult")).toBe(true);
    } finally {
      await evil.close();
    }
    for (const f of ["checkpoints.jsonl", "alerts.jsonl", "policy.json"]) expect(readFileSync(join(parent, f), "utf8")).toBe(`mine: ${f}\n`);
    expect(readdirSync(parent).sort()).toEqual(["alerts.jsonl", "checkpoints.jsonl", "policy.json", "runs"]);
    expect(existsSync(join(runsDir, "manifest.json"))).toBe(false);
    // The index is the same SQLite file (it may have gained the comparison's rows, never planted bytes).
    const ix = openIndex(runsDir);
    try {
      expect(ix.listRuns()).toEqual([]);
    } finally {
      ix.close();
    }
    expect(readFileSync(join(runsDir, "index.db")).subarray(0, 16).toString()).toBe(indexBefore.subarray(0, 16).toString());
  });

  it("a genuine worker refuses a job carrying payload.ts and a module outside --allow-modules; runs one inside it", async () => {
    const url = redis.url(4);
    const target = parseQueueUrl(url);
    const cwd = fresh("worker-cwd");
    const marker = join(cwd, "pwned");
    const child = spawn(process.execPath, ["--import", TSX, MAIN, "worker", "--queue", url, "--concurrency", "1", "--allow-modules", resolve(ROOT, "examples")], {
      cwd,
      env: { ...process.env, NODE_OPTIONS: "" },
      stdio: ["ignore", "ignore", "pipe"],
    });
    children.push(child);
    let log = "";
    child.stderr?.on("data", (d) => (log += d.toString()));
    const queue = new Queue(target.name, { connection: target.connection });
    const events = new QueueEvents(target.name, { connection: target.connection });
    try {
      await events.waitUntilReady();
      const payload = `import { writeFileSync } from "node:fs";\nwriteFileSync(${JSON.stringify(marker)}, "ran");\nexport default {};\n`;
      const plant = async (job: BatchJob) => {
        const added = await queue.add("run", { format: "gapwatch-job/1", job }, { jobId: job.jobId, attempts: 1 });
        try {
          await added.waitUntilFinished(events, 60_000);
          return "completed";
        } catch (e) {
          return (JSON.parse((e as Error).message) as { code: string }).code;
        }
      };
      expect(await plant({ ...jobOf({ env: "payload.ts" }, { "payload.ts": payload }), jobId: "evil-1" })).toBe("batch.jobFile");
      expect(await plant({ ...jobOf({ env: resolve(ROOT, "tests/fixtures/batch/broken-step.ts") }), jobId: "evil-2" })).toBe("batch.moduleNotAllowed");
      expect(await plant({ ...jobOf({ env: resolve(ROOT, "examples/pump-station.ts"), reward: undefined, steps: 200, checkpoints: 2 }), jobId: "ok-1" })).toBe("completed");
      expect(existsSync(marker)).toBe(false);
      expect(log).toContain("batch.jobFile");
    } finally {
      await events.close();
      await queue.close();
      child.kill("SIGTERM");
    }
  });
});
