/**
 * Running one batch job, in whatever thread or process holds it.
 *
 * - `executeLocal`: `runTraining` straight into the coordinator's runs directory (local pool).
 * - `executeRemote`: for a worker on any machine. Files the job carries are written to a private
 *   scratch folder, the run is trained into a scratch runs directory, and its files are read back and
 *   shipped in the job's return value; the scratch folder is then deleted. The coordinator writes the
 *   run directory (`writeShippedRun`), so workers need no shared disk. When a carried file had to be
 *   materialized under another path, the run is relabelled with the spec the user gave (run id,
 *   manifest config, summary, policy and alert lines), so the run id and every file equal those of a
 *   local run of the same config; checkpoints.jsonl holds no path and is shipped byte for byte.
 */
import { mkdirSync, mkdtempSync, readdirSync, readFileSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { basename, join } from "node:path";
import { GapwatchError, InputError } from "../errors.js";
import { CARRIED_FILE, checkShippedRun, runFolderInside } from "./job-guard.js";
import { commitRunDir, readRun, runId as makeRunId, RUN_FILES, tempRunDir } from "../store/run-store.js";
import { writeFileAtomic } from "../store/atomic.js";
import type { RunResult } from "../run/schema.js";
import { runTraining } from "../train/run.js";
import type { BatchJob, RunFailure, ShippedRun } from "./types.js";
import { sha256 } from "./plan.js";

export function failureOf(err: unknown): RunFailure {
  if (err instanceof GapwatchError) return { code: err.code, message: err.message, where: err.where, exitCode: err.exitCode };
  const e = err as Error;
  return { code: "internal", message: e?.message ?? String(err), exitCode: 1 };
}

export async function executeLocal(job: BatchJob, runsDir: string): Promise<RunResult> {
  return runTraining(job.input, { runsDir, sync: true, maxStates: job.maxStates });
}

/** Replace the run id (and the config's env / reward spec) inside a shipped run's files. */
function relabel(files: Record<string, string>, from: string, to: string, config: RunResult["config"]): Record<string, string> {
  const out: Record<string, string> = { ...files };
  const json = (name: string, edit: (doc: Record<string, unknown>) => void) => {
    if (out[name] === undefined) return;
    const doc = JSON.parse(out[name]) as Record<string, unknown>;
    edit(doc);
    out[name] = JSON.stringify(doc, null, 2) + "\n";
  };
  json(RUN_FILES.manifest, (d) => {
    d.runId = to;
    d.config = config;
    const inputs = d.inputs as { files?: { role: string; path: string }[] } | undefined;
    for (const f of inputs?.files ?? []) {
      if (f.role === "env") f.path = config.env;
      if (f.role === "reward") f.path = config.reward;
    }
  });
  json(RUN_FILES.summary, (d) => {
    if (d.runId === from) d.runId = to;
  });
  json(RUN_FILES.policy, (d) => {
    if (d.runId === from) d.runId = to;
  });
  if (out[RUN_FILES.alerts] !== undefined) {
    out[RUN_FILES.alerts] = out[RUN_FILES.alerts]
      .split("\n")
      .map((line) => {
        if (!line.trim()) return line;
        const doc = JSON.parse(line) as Record<string, unknown>;
        if (doc.runId === from) doc.runId = to;
        return JSON.stringify(doc);
      })
      .join("\n");
  }
  return out;
}

export async function executeRemote(job: BatchJob): Promise<ShippedRun> {
  const scratch = mkdtempSync(join(tmpdir(), "gapwatch-job-"));
  try {
    const input = { ...job.input };
    const original = { env: job.input.env, reward: job.input.reward };
    let moved = false;
    for (const [spec, text] of Object.entries(job.files ?? {})) {
      // Only data files travel (job-guard.ts checks it before the job reaches this thread, too).
      if (!CARRIED_FILE.test(spec)) throw new InputError("batch.jobFile", `only data files (.json, .drn) may travel in a job, not "${basename(spec)}"`, "queued job");
      const dir = join(scratch, "inputs", sha256(text).slice(0, 16));
      mkdirSync(dir, { recursive: true });
      const file = join(dir, basename(spec));
      writeFileAtomic(file, text);
      // A family member chosen by the layout becomes the env itself (one model file, layout 0).
      if (input.env === spec || job.envFile === spec) input.env = file;
      if (input.reward === spec) input.reward = file;
      moved = true;
    }
    const runsDir = join(scratch, "runs");
    const result = await runTraining(input, { runsDir, sync: true, maxStates: job.maxStates });
    const files: Record<string, string> = {};
    for (const name of readdirSync(result.runDir)) {
      if (name.startsWith(".")) continue;
      files[name] = readFileSync(join(result.runDir, name), "utf8");
    }
    if (!moved) return { runId: result.runId, files };
    const config = { ...result.config, env: original.env, ...(original.reward !== undefined && result.config.reward === input.reward ? { reward: original.reward } : {}) };
    const manifest = JSON.parse(files[RUN_FILES.manifest]) as { inputs?: { hash: string } };
    const id = makeRunId(config, manifest.inputs?.hash);
    return { runId: id, files: relabel(files, result.runId, id, config) };
  } finally {
    rmSync(scratch, { recursive: true, force: true });
  }
}

/**
 * Coordinator side: write the result of `job` into `<runsDir>/<runId>/` (a temporary folder renamed
 * into place, run-store.ts `commitRunDir`). The
 * result is checked first (job-guard.ts): the run id must be this job's, the files only run files.
 */
export function writeShippedRun(runsDir: string, job: BatchJob, value: unknown): RunResult {
  const shipped = checkShippedRun(job, value);
  runFolderInside(runsDir, shipped.runId);
  const tmp = tempRunDir(runsDir, shipped.runId);
  mkdirSync(tmp, { recursive: true });
  try {
    for (const [name, text] of Object.entries(shipped.files)) writeFileAtomic(join(tmp, name), text);
  } catch (err) {
    rmSync(tmp, { recursive: true, force: true });
    throw err;
  }
  return readRun(commitRunDir(runsDir, shipped.runId, tmp));
}
