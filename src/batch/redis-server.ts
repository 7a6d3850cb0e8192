/**
 * A private redis-server for the distributed-batch tests and the compare benchmark: Debian's
 * redis-server (installed by .ci/run), started on a free 127.0.0.1 port with persistence off, stopped by
 * the caller. Tests start one in beforeAll/afterAll, so only the files that need it start one.
 */
import { spawn, type ChildProcess } from "node:child_process";
import { createConnection, createServer } from "node:net";
import { GapwatchError } from "../errors.js";

export interface RedisHandle {
  port: number;
  url: (db?: number) => string;
  stop(): Promise<void>;
}

export function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const srv = createServer();
    srv.once("error", reject);
    srv.listen(0, "127.0.0.1", () => {
      const addr = srv.address();
      const port = typeof addr === "object" && addr ? addr.port : 0;
      srv.close(() => resolve(port));
    });
  });
}

function ping(port: number): Promise<boolean> {
  return new Promise((resolve) => {
    const sock = createConnection({ host: "127.0.0.1", port });
    let buf = "";
    const done = (ok: boolean) => {
      sock.destroy();
      resolve(ok);
    };
    sock.setTimeout(500, () => done(false));
    sock.on("error", () => done(false));
    sock.on("connect", () => sock.write("PING\r\n"));
    sock.on("data", (d) => {
      buf += d.toString();
      if (buf.includes("\r\n")) done(buf.startsWith("+PONG"));
    });
  });
}

/** Start a private redis-server; `port` restarts one on the port a stopped server had (a fresh, empty database). */
export async function startRedis(bin = process.env.REDIS_SERVER ?? "redis-server", port?: number): Promise<RedisHandle> {
  port ??= await freePort();
  const child: ChildProcess = spawn(bin, ["--port", String(port), "--bind", "127.0.0.1", "--save", "", "--appendonly", "no", "--loglevel", "warning"], {
    stdio: ["ignore", "ignore", "pipe"],
  });
  let stderr = "";
  child.stderr?.on("data", (d) => (stderr += d.toString()));
  let exited = false;
  child.on("exit", () => (exited = true));
  for (let i = 0; i < 100; i++) {
    if (exited) throw new GapwatchError("batch.redisServer", `redis-server exited at start: ${stderr.trim() || "no output"}; install it (apt-get install redis-server)`, { where: bin });
    if (await ping(port)) break;
    if (i === 99) throw new GapwatchError("batch.redisServer", `redis-server did not answer on 127.0.0.1:${port}`, { where: bin });
    await new Promise((r) => setTimeout(r, 100));
  }
  return {
    port,
    url: (db = 0) => `redis://127.0.0.1:${String(port)}/${db}`,
    stop: () =>
      new Promise<void>((resolve) => {
        if (exited) return resolve();
        child.once("exit", () => resolve());
        child.kill("SIGTERM");
      }),
  };
}
