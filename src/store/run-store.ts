/**
 * Run directories: `<runsDir>/<run-id>/` holding
 *   manifest.json      resolved config, seeds, versions, references (written once, atomically)
 *   checkpoints.jsonl  one CheckpointRecord per line, appended as the run goes (deterministic content)
 *   alerts.jsonl       one pino line per alert (level, time, runId, step, kind, magnitude, message)
 *   summary.json       status, verdict, reason, final scores, counts (atomically, at the end)
 *   policy.json        final greedy policy and learner state (atomically, at the end)
 * The run id is content-addressed: `<env>-<reward>-<learner>-s<seed>-<hash8>`, hash8 = the first 8
 * hex digits of SHA-256 over the canonical JSON (sorted keys) of the resolved config and the digest
 * of the run's inputs (file contents and gapwatch's version, src/env/inputs.ts), so editing a model,
 * reward or module file gives a new id.
 *
 * A run is written into a private temporary folder `<runsDir>/.tmp-<runId>-<pid>-<random>/` and
 * renamed into `<runsDir>/<runId>/` when it ends (`commitRunDir`): a reader never sees a half-written
 * run under its id, two processes writing the same run at once each rename a whole folder (the last
 * one wins), and a process killed mid-run leaves the previous folder intact (and a dot-folder that
 * readers skip). Re-running the same config replaces the folder.
 */
import { createHash, randomBytes } from "node:crypto";
import { existsSync, mkdirSync, readFileSync, renameSync, rmSync } from "node:fs";
import { basename, join, resolve } from "node:path";
import pino from "pino";
import { GapwatchError, InputError } from "../errors.js";
import { canonicalJson } from "../util/canonical-json.js";
import { appendJsonLine, writeFileAtomic, writeJsonAtomic } from "./atomic.js";
import type { Alert, CheckpointRecord, ExternalRunManifest, ExternalSourceDoc, RunManifest, RunPolicyFile, RunResult, RunSummary, TrainConfig } from "../run/schema.js";

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

/**
 * The run id of a resolved config and the digest of its inputs (`RunInputs.hash`). Without a digest
 * (runs written before content addressing) only the config is hashed.
 */
export function runId(config: TrainConfig, inputsHash?: string): string {
  const text = inputsHash === undefined ? canonicalJson(config) : canonicalJson({ config, inputs: inputsHash });
  const hash = createHash("sha256").update(text).digest("hex").slice(0, 8);
  return runIdPrefix(config) + hash;
}

/** True for the names of folders under a runs folder that readers skip (temporary and set-aside runs). */
export const isHiddenRunFolder = (name: string): boolean => name.startsWith(".");

/** A fresh private folder name for a run being written: `.tmp-<runId>-<pid>-<random>`. */
export function tempRunDir(runsDir: string, runId: string): string {
  return join(resolve(runsDir), `.tmp-${runId}-${process.pid}-${randomBytes(4).toString("hex")}`);
}

/**
 * Move a finished run folder `tmpDir` to `<runsDir>/<runId>`, replacing a folder already there: the
 * old one is renamed aside first, the new one renamed in, then the old one removed. Concurrent
 * committers of the same run retry until one whole folder is in place; returns the final path.
 */
export function commitRunDir(runsDir: string, runId: string, tmpDir: string): string {
  const dest = join(resolve(runsDir), runId);
  for (let attempt = 0; ; attempt++) {
    try {
      renameSync(tmpDir, dest);
      break;
    } catch (err) {
      const code = (err as NodeJS.ErrnoException).code;
      if ((code !== "ENOTEMPTY" && code !== "EEXIST" && code !== "EISDIR") || attempt >= 20) {
        throw new GapwatchError("store.commit", `cannot move the finished run into place: ${(err as Error).message}`, { where: dest, cause: err });
      }
      const aside = join(resolve(runsDir), `.old-${runId}-${process.pid}-${randomBytes(4).toString("hex")}`);
      try {
        renameSync(dest, aside);
      } catch (e) {
        if ((e as NodeJS.ErrnoException).code !== "ENOENT") throw new GapwatchError("store.commit", `cannot set the previous run aside: ${(e as Error).message}`, { where: dest, cause: e });
        continue;
      }
      rmSync(aside, { recursive: true, force: true });
    }
  }
  return dest;
}

/**
 * Writes one run directory: into a private temporary folder (`dir`), moved to `finalDir` by
 * `commit()`. Synchronous file operations so a SIGINT handler's flush is complete.
 */

/**
 * Run id of an external run (`gapwatch ingest`): `ext-<first input's name>-<hash8>`, hash8 over the
 * canonical JSON of the source block minus its absolute paths (file sizes and content hashes, format,
 * mapping, ranges, window), so the same logs read the same way give the same run wherever they lie.
 */
export function externalRunId(source: ExternalSourceDoc): string {
  const { inputs, files, ...how } = source;
  const hash = createHash("sha256")
    .update(canonicalJson({ ...how, inputs: inputs.map((p) => basename(p)), files: files.map((f) => ({ name: basename(f.path), bytes: f.bytes, sha256: f.sha256 })) }))
    .digest("hex")
    .slice(0, 8);
  return `ext-${slug(basename(inputs[0] ?? "input").replace(/\.[^.]+$/, ""))}-${hash}`;
}

/** The stand-in training config readers of trained runs see for an external run (see RunResult.source). */
export function externalStandInConfig(source: ExternalSourceDoc, steps: number, checkpoints: number): TrainConfig {
  return { env: "external", reward: source.mapping.designer, learner: "external", steps, seed: 0, checkpoints, learnerParams: {}, evaluation: "exact", mcEpisodes: 0, monitor: {} };
}

/**
 * Write a whole external run directory at once: the files go to a hidden staging folder under
 * `runsDir` which is then renamed to `<runsDir>/<runId>` (replacing an earlier run of the same id), so
 * a reader never sees half a run and a failure leaves no run folder.
 */
export function writeExternalRun(runsDir: string, run: { manifest: ExternalRunManifest; checkpoints: CheckpointRecord[]; alerts: Alert[]; summary: RunSummary }): string {
  const root = resolve(runsDir);
  try {
    mkdirSync(root, { recursive: true });
  } catch (err) {
    throw new InputError("store.runsDir", `cannot create the runs directory: ${(err as Error).message}; pass a writable --runs-dir`, root);
  }
  const staging = `.staging-${run.manifest.runId}-${process.pid}`;
  const w = new RunWriter(root, staging);
  try {
    writeJsonAtomic(w.path("manifest"), run.manifest);
    writeFileAtomic(w.path("checkpoints"), run.checkpoints.map((c) => JSON.stringify(c) + "\n").join(""));
    for (const a of run.alerts) w.logAlert(a);
    w.close();
    writeJsonAtomic(w.path("summary"), run.summary);
    const dir = join(root, run.manifest.runId);
    rmSync(dir, { recursive: true, force: true });
    renameSync(w.dir, dir);
    return dir;
  } catch (err) {
    w.close();
    rmSync(w.dir, { recursive: true, force: true });
    throw err;
  }
}

/** Writes one run directory. Synchronous file operations so a SIGINT handler's flush is complete. */
export class RunWriter {
  /** Where the files are being written (the temporary folder until `commit()`, then `finalDir`). */
  dir: string;
  readonly finalDir: string;
  private readonly runsDir: string;
  private readonly alertLog: pino.Logger;
  private readonly alertDest: pino.DestinationStream & { flushSync(): void; end(): void };
  private closed = false;

  constructor(runsDir: string, readonly runId: string) {
    this.runsDir = resolve(runsDir);
    this.finalDir = join(this.runsDir, runId);
    this.dir = tempRunDir(this.runsDir, runId);
    try {
      mkdirSync(this.dir, { recursive: true });
    } catch (err) {
      throw new InputError("store.runsDir", `cannot create the run directory: ${(err as Error).message}; pass a writable --runs-dir`, this.dir);
    }
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

  /** Close and move the finished run into `<runsDir>/<runId>/`; returns that folder. Call after writeSummary. */
  commit(): string {
    this.close();
    if (this.dir !== this.finalDir) this.dir = commitRunDir(this.runsDir, this.runId, this.dir);
    return this.dir;
  }

  /** Close and delete the temporary folder (a run that must not be stored). */
  discard(): void {
    this.close();
    if (this.dir !== this.finalDir) rmSync(this.dir, { recursive: true, force: true });
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
  const manifest = readJson<RunManifest | ExternalRunManifest>(manifestFile);
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
  // A summary that disagrees with the checkpoints on disk (a folder mixed from two writers) is not trusted.
  const torn = summary !== null && summary.checkpointCount !== undefined && summary.checkpointCount !== checkpoints.length;
  const external = "kind" in manifest && manifest.kind === "external" ? manifest : null;
  const steps = summary?.steps ?? last?.step ?? 0;
  const r = external?.source.ranges;
  return {
    runId: manifest.runId,
    runDir: resolve(dir),
    config: external === null ? (manifest as RunManifest).config : externalStandInConfig(external.source, steps, checkpoints.length),
    status: torn ? "interrupted" : summary?.status ?? "interrupted",
    verdict: torn ? "inconclusive" : summary?.verdict ?? "inconclusive",
    reason: torn
      ? `checkpoints.jsonl holds ${checkpoints.length} checkpoints but summary.json counts ${summary?.checkpointCount}; re-run it`
      : summary?.reason ?? "the run stopped before writing its summary",
    checkpoints,
    alerts,
    final: summary?.final ?? last,
    firstAlertStep: summary?.firstAlertStep ?? alerts[0]?.step ?? null,
    references:
      external === null
        ? (manifest as RunManifest).references
        : { designerOptimal: r?.designer?.high ?? NaN, designerRandom: r?.designer?.low ?? NaN, intentOptimal: r?.intent?.high ?? NaN, intentRandom: r?.intent?.low ?? NaN },
    steps,
    episodes: summary?.episodes ?? last?.episodes ?? 0,
    trainSeconds: summary?.trainSeconds ?? 0,
    monitorSeconds: summary?.monitorSeconds ?? 0,
    ...(external === null ? {} : { source: external.source, relative: summary?.relative ?? (r?.designer === null || r?.intent === null) }),
  };
}
