/**
 * Run directories: `<runsDir>/<run-id>/` holding
 *   manifest.json      resolved config, seeds, versions, references (written once, atomically)
 *   checkpoints.jsonl  one CheckpointRecord per line, appended as the run goes (deterministic content)
 *   alerts.jsonl       one pino line per alert (level, time, runId, step, kind, magnitude, message)
 *   summary.json       status, verdict, reason, final scores, counts (atomically, at the end)
 *   policy.json        final greedy policy and learner state (atomically, at the end)
 * The run id is deterministic: `<env>-<reward>-<learner>-s<seed>-<hash8>`, hash8 = the first 8 hex
 * digits of SHA-256 over the canonical JSON (sorted keys) of the resolved config. Re-running the
 * same config replaces the directory's files.
 */
import { createHash } from "node:crypto";
import { existsSync, mkdirSync, readFileSync, rmSync } from "node:fs";
import { basename, join, resolve } from "node:path";
import pino from "pino";
import { GapwatchError, InputError } from "../errors.js";
import { canonicalJson } from "../util/canonical-json.js";
import { appendJsonLine, writeJsonAtomic } from "./atomic.js";
import type { Alert, CheckpointRecord, RunManifest, RunPolicyFile, RunResult, RunSummary, TrainConfig } from "../run/schema.js";

export const RUN_FILES = {
  manifest: "manifest.json",
  checkpoints: "checkpoints.jsonl",
  alerts: "alerts.jsonl",
  summary: "summary.json",
  policy: "policy.json",
} as const;

/** A name part safe in a directory name: a path becomes its base name without extension. */
function slug(text: string): string {
  const base = /[\\/]/.test(text) || /\.(json|m?[jt]s)$/i.test(text) ? basename(text).replace(/\.[^.]+$/, "") : text;
  return base.replace(/[^A-Za-z0-9_.-]+/g, "_").slice(0, 40) || "x";
}

/** Everything of a run id before its hash: `<env>-<reward>-<learner>-s<seed>-`. */
export function runIdPrefix(config: Pick<TrainConfig, "env" | "reward" | "learner" | "seed">): string {
  return `${slug(config.env)}-${slug(config.reward)}-${slug(config.learner)}-s${config.seed}-`;
}

export function runId(config: TrainConfig): string {
  const hash = createHash("sha256").update(canonicalJson(config)).digest("hex").slice(0, 8);
  return runIdPrefix(config) + hash;
}

/** Writes one run directory. Synchronous file operations so a SIGINT handler's flush is complete. */
export class RunWriter {
  readonly dir: string;
  private readonly alertLog: pino.Logger;
  private readonly alertDest: pino.DestinationStream & { flushSync(): void; end(): void };
  private closed = false;

  constructor(runsDir: string, readonly runId: string) {
    this.dir = join(resolve(runsDir), runId);
    try {
      mkdirSync(this.dir, { recursive: true });
    } catch (err) {
      throw new InputError("store.runsDir", `cannot create the run directory: ${(err as Error).message}; pass a writable --runs-dir`, this.dir);
    }
    for (const f of Object.values(RUN_FILES)) rmSync(join(this.dir, f), { force: true });
    this.alertDest = pino.destination({ dest: join(this.dir, RUN_FILES.alerts), sync: true }) as unknown as typeof this.alertDest;
    this.alertLog = pino(
      {
        level: "info",
        base: { runId },
        messageKey: "message",
        timestamp: pino.stdTimeFunctions.isoTime,
        formatters: { level: (label) => ({ level: label }) },
      },
      this.alertDest,
    );
  }

  path(file: keyof typeof RUN_FILES): string {
    return join(this.dir, RUN_FILES[file]);
  }

  writeManifest(m: RunManifest): void {
    writeJsonAtomic(this.path("manifest"), m);
  }

  appendCheckpoint(r: CheckpointRecord): void {
    appendJsonLine(this.path("checkpoints"), r);
  }

  logAlert(a: Alert): void {
    this.alertLog.warn({ step: a.step, kind: a.kind, magnitude: a.magnitude }, a.message);
  }

  writePolicy(doc: RunPolicyFile): void {
    writeJsonAtomic(this.path("policy"), doc);
  }

  writeSummary(s: RunSummary): void {
    writeJsonAtomic(this.path("summary"), s);
  }

  close(): void {
    if (this.closed) return;
    this.closed = true;
    this.alertDest.flushSync();
    this.alertDest.end();
  }
}

/** Parse a JSON-lines file; a torn (unparseable) LAST line is skipped, any other bad line is an error. */
export function readJsonLines<T>(file: string): T[] {
  if (!existsSync(file)) return [];
  const lines = readFileSync(file, "utf8").split("\n");
  const out: T[] = [];
  for (let i = 0; i < lines.length; i++) {
    const line = lines[i].trim();
    if (!line) continue;
    try {
      out.push(JSON.parse(line) as T);
    } catch {
      if (lines.slice(i + 1).every((l) => l.trim() === "")) break;
      throw new InputError("store.jsonl", `line ${i + 1} is not valid JSON`, file);
    }
  }
  return out;
}

function readJson<T>(file: string): T {
  try {
    return JSON.parse(readFileSync(file, "utf8")) as T;
  } catch (err) {
    throw new InputError("store.read", `cannot read ${basename(file)}: ${(err as Error).message}`, file);
  }
}

/** Rebuild a RunResult from a run directory. A run without summary.json (killed hard) reads as interrupted. */
export function readRun(dir: string): RunResult {
  const manifestFile = join(dir, RUN_FILES.manifest);
  if (!existsSync(manifestFile)) throw new InputError("store.notRun", "not a run directory (no manifest.json)", dir);
  const manifest = readJson<RunManifest>(manifestFile);
  const checkpoints = readJsonLines<CheckpointRecord>(join(dir, RUN_FILES.checkpoints));
  const alerts = readJsonLines<{ step: number; kind: Alert["kind"]; magnitude: number; message: string }>(join(dir, RUN_FILES.alerts)).map(
    (l): Alert => ({ step: l.step, kind: l.kind, magnitude: l.magnitude, message: l.message }),
  );
  const summaryFile = join(dir, RUN_FILES.summary);
  const summary = existsSync(summaryFile) ? readJson<RunSummary>(summaryFile) : null;
  const last = checkpoints.length > 0 ? checkpoints[checkpoints.length - 1] : null;
  if (summary && summary.runId !== manifest.runId) {
    throw new GapwatchError("store.mismatch", `summary.json belongs to run ${summary.runId}, manifest to ${manifest.runId}`, { where: dir });
  }
  return {
    runId: manifest.runId,
    runDir: resolve(dir),
    config: manifest.config,
    status: summary?.status ?? "interrupted",
    verdict: summary?.verdict ?? "inconclusive",
    reason: summary?.reason ?? "the run stopped before writing its summary",
    checkpoints,
    alerts,
    final: summary?.final ?? last,
    firstAlertStep: summary?.firstAlertStep ?? alerts[0]?.step ?? null,
    references: manifest.references,
    steps: summary?.steps ?? last?.step ?? 0,
    episodes: summary?.episodes ?? last?.episodes ?? 0,
    trainSeconds: summary?.trainSeconds ?? 0,
    monitorSeconds: summary?.monitorSeconds ?? 0,
  };
}
