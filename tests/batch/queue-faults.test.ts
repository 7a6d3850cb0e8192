/**
 * Queue faults a new user met, against real redis-servers (Debian's, on free 127.0.0.1 ports) and a real
 * `gapwatch worker` process:
 * - nothing listening at the URL: compare and worker end within 10 s with one line naming the URL, exit 2
 *   (they used to print a connection error twice a second forever);
 * - a queue with no worker: the coordinator says so every few seconds, and --wait-timeout bounds the wait;
 * - Redis restarted mid-sweep without persistence (the README's own settings): the vanished jobs are
 *   enqueued again and the sweep completes (it used to wait silently forever);
 * - a misspelt variant or an absurd seed count is refused before any run starts.
 */
import { spawn, type ChildProcess } from "node:child_process";
import { resolve } from "node:path";
import { pathToFileURL } from "node:url";
import { Queue } from "bullmq";
import { afterAll, describe, expect, it } from "vitest";
import { runCompare } from "../../src/batch/compare.js";
import { parseQueueUrl, startQueueWorker } from "../../src/batch/queue.js";
import { memoryIO } from "../../src/cli/io.js";
import { runCli } from "../../src/cli/program.js";
import { freePort, startRedis, type RedisHandle } from "../setup/redis.js";
import { tempDirsRemovedAfterAll } from "../helpers/temp-dirs.js";

const ROOT = resolve(__dirname, "../..");
const MAIN = resolve(ROOT, "src/cli/main.ts");
const TSX = pathToFileURL(resolve(ROOT, "node_modules/tsx/dist/loader.mjs")).href;

const fresh = tempDirsRemovedAfterAll();
const children: ChildProcess[] = [];
const servers: RedisHandle[] = [];
afterAll(async () => {
  for (const c of children) if (c.exitCode === null && c.signalCode === null) c.kill("SIGKILL");
  for (const s of servers) await s.stop();
});

async function cli(...argv: string[]) {
  const io = memoryIO();
  const code = await runCli(argv, io);
  return { code, out: io.stdout, err: io.stderr };
}

const sweep = (runsDir: string, queue: string) => ({ env: "fresh-coat-tug", rewards: ["fast", "default"], learners: ["q-learning"], seeds: [1, 2], steps: 2000, runsDir, queue, bootstrapSeed: 1, reps: 100 });

describe("queue faults", () => {
  it("nothing listening: compare and worker end within 10 s with one line naming the URL, exit 2", async () => {
    const url = `redis://127.0.0.1:${await freePort()}/0`;
    const t0 = Date.now();
    const r = await cli("compare", "--env", "fresh-coat-tug", "--rewards", "fast", "--seeds", "1", "--queue", url, "--runs-dir", fresh("unreach"));
    expect(r.code).toBe(2);
    expect(r.err.trim().split("\n")).toHaveLength(1);
    expect(r.err).toContain("queue.unreachable");
    expect(r.err).toContain(url);
    const w = await cli("worker", "--queue", url, "--quiet");
    expect(w.code).toBe(2);
    expect(w.err.trim().split("\n")).toHaveLength(1);
    expect(w.err).toContain(url);
    expect(Date.now() - t0).toBeLessThan(20_000);
  });

  it("no worker: the coordinator says so every few seconds; --wait-timeout reports the unfinished runs failed", async () => {
    const redis = await startRedis();
    servers.push(redis);
    const notices: string[] = [];
    const r = await runCompare({ ...sweep(fresh("nowork"), redis.url(0)), waitTimeoutMs: 2500 }, { onNotice: (l) => notices.push(l) });
    expect(r.outcomes.every((o) => !o.ok && o.error.code === "batch.waitTimeout")).toBe(true);
    expect(notices.some((l) => l.includes("no worker is connected") && l.includes(redis.url(0)))).toBe(true);
  });

  it("Redis restarted mid-sweep without persistence: the vanished jobs are enqueued again and the sweep completes", async () => {
    let redis = await startRedis();
    const port = redis.port;
    const url = redis.url(0);
    const notices: string[] = [];
    const runsDir = fresh("restart");
    const done = runCompare(sweep(runsDir, url), { onNotice: (l) => notices.push(l) });
    // Wait until the jobs are in Redis, then restart it empty on the same port.
    const q = new Queue(parseQueueUrl(url).name, { connection: parseQueueUrl(url).connection });
    for (let i = 0; i < 200 && (await q.getJobCounts("wait")).wait < 4; i++) await new Promise((r) => setTimeout(r, 50));
    expect((await q.getJobCounts("wait")).wait).toBe(4);
    await q.close();
    await redis.stop();
    redis = await startRedis(undefined, port);
    servers.push(redis);
    const worker = spawn(process.execPath, ["--import", TSX, MAIN, "worker", "--queue", url, "--concurrency", "1", "--quiet"], { cwd: ROOT, env: { ...process.env, NODE_OPTIONS: "" }, stdio: "ignore" });
    children.push(worker);
    const r = await done;
    expect(r.stats.failed).toEqual([]);
    expect(r.outcomes.filter((o) => o.ok)).toHaveLength(4);
    expect(notices.some((l) => /4 job\(s\) had vanished/.test(l))).toBe(true);
    worker.kill("SIGTERM");
  });

  it("a worker's later connection errors are reported at most once every 10 s, with the URL", async () => {
    const redis = await startRedis();
    const lines: string[] = [];
    const h = await startQueueWorker(parseQueueUrl(redis.url(0)), { onEvent: (kind, _id, detail) => kind === "error" && lines.push(detail) });
    await redis.stop();
    await new Promise((r) => setTimeout(r, 3000));
    expect(lines.length).toBe(1);
    expect(lines[0]).toContain(redis.url(0));
    await Promise.race([h.close(), new Promise((r) => setTimeout(r, 2000))]);
  });

  it("a misspelt variant and an absurd seed count are refused before any run, exit 2", async () => {
    const runsDir = fresh("misspelt");
    const r = await cli("compare", "--env", "fresh-coat-tug", "--rewards", "default,fsat", "--seeds", "2", "--runs-dir", runsDir, "--workers", "1");
    expect(r.code).toBe(2);
    expect(r.err).toContain('unknown reward variant "fsat" for fresh-coat-tug; did you mean "fast"?');
    expect(r.err.trim().split("\n")).toHaveLength(1);
    const { existsSync, readdirSync } = await import("node:fs");
    expect(existsSync(runsDir) ? readdirSync(runsDir).filter((n) => n.startsWith("fresh-coat-tug")) : []).toEqual([]);
    // A simulator module: its variant names are read from the definition (not compiled) before any run.
    const m = await cli("compare", "--env", "tests/fixtures/envs/corridor-ok.ts", "--rewards", "default,defualt", "--seeds", "2", "--runs-dir", runsDir, "--workers", "1");
    expect(m.code, m.err).toBe(2);
    expect(m.err.trim().split("\n")).toHaveLength(1);
    expect(m.err).toContain('unknown reward variant "defualt" for corridor-ok.ts; did you mean "default"?');
    expect(existsSync(runsDir) ? readdirSync(runsDir).filter((n) => n.startsWith("corridor")) : []).toEqual([]);
    const s = await cli("compare", "--env", "fresh-coat-tug", "--rewards", "default", "--seeds", "1000000000", "--runs-dir", runsDir);
    expect(s.code).toBe(2);
    expect(s.err).toContain("--seeds");
    const l = await cli("compare", "--env", "fresh-coat-tug", "--rewards", "default", "--seed-list", "1-1000000000", "--runs-dir", runsDir);
    expect(l.code).toBe(2);
  });
});
