/**
 * The peer programs of shared/bench/peers (C, JavaScript, Python, numpy) and our own program, as
 * commands that print one CHECK and one TIME line (PROBLEM.md section 7). Process I/O lives here.
 */
import { spawnSync } from "node:child_process";
import { existsSync, mkdtempSync, readFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { dirname, join, resolve } from "node:path";
import { fileURLToPath } from "node:url";
import { InputError } from "../errors.js";

export type Workload = { kind: "vi"; W: number; H: number } | { kind: "ql"; W: number; H: number; steps: number; seed: number };

export interface Impl {
  name: string;
  /** argv for a workload, or null when this implementation does not run it (e.g. numpy for ql). */
  command(w: Workload): string[] | null;
  /** Takes over a minute at 512x512 (pure Python, naive JS, numpy gather): skipped unless --slow. */
  slowAt512: boolean;
  /** Whether this row's CHECK line agrees with the reference; default: byte-identical. */
  matches?: (check: string, reference: string) => boolean;
}

export interface RunOutput {
  check: string;
  /** The program's own in-process time of the timed region (train_s / solve_s). */
  seconds: number;
  /** Spawn-to-exit wall time. */
  wall: number;
}

export function workloadArgs(w: Workload): string[] {
  return w.kind === "vi" ? ["vi", String(w.W), String(w.H)] : ["ql", String(w.W), String(w.H), String(w.steps), String(w.seed)];
}

/** Default peers folder: ../shared/bench/peers next to the repository, or $GAPWATCH_PEERS. */
export function defaultPeersDir(): string {
  if (process.env.GAPWATCH_PEERS) return resolve(process.env.GAPWATCH_PEERS);
  let dir = dirname(fileURLToPath(import.meta.url));
  for (let i = 0; i < 6; i++) {
    const candidate = join(dir, "..", "shared", "bench", "peers");
    if (existsSync(join(candidate, "PROBLEM.md")) || existsSync(join(candidate, "expected.txt"))) return resolve(candidate);
    dir = dirname(dir);
  }
  return resolve("../shared/bench/peers");
}

/** Build the C peer with the flags of peers/run.sh into a fresh temporary folder; null if gcc fails. */
export function buildCPeer(peersDir: string): { binary: string | null; note?: string } {
  const out = join(mkdtempSync(join(tmpdir(), "gapwatch-bench-")), "gridrl");
  const src = join(peersDir, "c", "gridrl.c");
  if (!existsSync(src)) return { binary: null, note: `C peer source not found at ${src}` };
  const r = spawnSync("gcc", ["-O2", "-ffp-contract=off", "-Wall", "-Wextra", "-o", out, src, "-lm"], { encoding: "utf8" });
  if (r.status !== 0) return { binary: null, note: `gcc failed: ${(r.stderr || String(r.error)).trim().split("\n")[0]}` };
  return { binary: out };
}

/** A python3 that can import numpy, or null. */
export function findNumpyPython(): string | null {
  for (const py of ["python3", "/usr/bin/python3"]) {
    const r = spawnSync(py, ["-c", "import numpy"], { stdio: "ignore" });
    if (r.status === 0) return py;
  }
  return null;
}

export function hasPython(): boolean {
  return spawnSync("python3", ["--version"], { stdio: "ignore" }).status === 0;
}

export interface PeerSetup {
  peersDir: string;
  cBinary: string | null;
  numpyPython: string | null;
  python: boolean;
  notes: string[];
}

export function setupPeers(peersDir: string): PeerSetup {
  const notes: string[] = [];
  const c = buildCPeer(peersDir);
  if (c.note) notes.push(`C peer skipped: ${c.note}`);
  const numpyPython = findNumpyPython();
  if (!numpyPython) notes.push("numpy not importable by python3 or /usr/bin/python3: numpy peers skipped");
  const python = hasPython();
  if (!python) notes.push("python3 not found: Python peers skipped");
  return { peersDir, cBinary: c.binary, numpyPython, python, notes };
}

/** Our program: this same file's child mode (`--child vi W H` / `--child ql W H STEPS SEED`). */
export function oursImpl(mainJs: string): Impl {
  return { name: "gapwatch", slowAt512: false, command: (w) => [process.execPath, mainJs, "--child", ...workloadArgs(w)] };
}

export function peerImpls(p: PeerSetup): Impl[] {
  const d = p.peersDir;
  const list: Impl[] = [];
  if (p.cBinary) list.push({ name: "c", slowAt512: false, command: (w) => [p.cBinary as string, ...workloadArgs(w)] });
  list.push({ name: "js-typed", slowAt512: false, command: (w) => [process.execPath, join(d, "js", "typed.js"), ...workloadArgs(w)] });
  list.push({ name: "js-naive", slowAt512: true, command: (w) => [process.execPath, join(d, "js", "naive.js"), ...workloadArgs(w)] });
  if (p.python) list.push({ name: "python", slowAt512: true, command: (w) => ["python3", join(d, "python", "gridrl.py"), ...workloadArgs(w)] });
  if (p.numpyPython) {
    const py = p.numpyPython;
    const vi = (mode: string) => (w: Workload) => (w.kind === "vi" ? [py, join(d, "python", "vi_numpy.py"), String(w.W), String(w.H), mode] : null);
    list.push({ name: "numpy-shift", slowAt512: false, command: vi("shift") });
    list.push({ name: "numpy-gather", slowAt512: true, command: vi("gather") });
  }
  return list;
}

/** Parse a program's stdout: exactly one CHECK line and one TIME line with train_s or solve_s. */
export function parseOutput(stdout: string, where: string): { check: string; seconds: number } {
  const lines = stdout.split("\n");
  const checks = lines.filter((l) => l.startsWith("CHECK "));
  const times = lines.filter((l) => l.startsWith("TIME "));
  if (checks.length !== 1 || times.length !== 1) {
    throw new InputError("input.benchOutput", `expected one CHECK and one TIME line, got ${checks.length} and ${times.length}`, where);
  }
  const m = /\b(?:train_s|solve_s)=([0-9.eE+-]+)/.exec(times[0]);
  if (!m) throw new InputError("input.benchOutput", `TIME line has no train_s/solve_s: ${times[0]}`, where);
  return { check: checks[0], seconds: Number(m[1]) };
}

export function runCommand(argv: string[]): RunOutput {
  const t0 = process.hrtime.bigint();
  const r = spawnSync(argv[0], argv.slice(1), { encoding: "utf8", stdio: ["ignore", "pipe", "pipe"], maxBuffer: 1 << 24 });
  const wall = Number(process.hrtime.bigint() - t0) / 1e9;
  const where = argv.join(" ");
  if (r.status !== 0) {
    throw new InputError("input.benchPeer", `exited with ${r.status ?? r.signal}: ${(r.stderr || String(r.error ?? "")).trim().split("\n").slice(-1)[0]}`, where);
  }
  return { ...parseOutput(r.stdout, where), wall };
}

/** CHECK lines of peers/expected.txt, keyed by their input part (mode, W, H, and steps, seed for ql). */
export function readExpected(peersDir: string): Map<string, string> {
  const map = new Map<string, string>();
  const file = join(peersDir, "expected.txt");
  if (!existsSync(file)) return map;
  for (const raw of readFileSync(file, "utf8").split("\n")) {
    const line = raw.trim();
    if (line.startsWith("CHECK ")) map.set(checkKey(line), line);
  }
  return map;
}

export function checkKey(line: string): string {
  const parts = line.split(" ");
  return parts.slice(0, parts[1] === "ql" ? 6 : 4).join(" ");
}
