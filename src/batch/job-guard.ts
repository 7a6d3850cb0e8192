/**
 * What crosses the queue is untrusted. Anyone who can write to the Redis database can plant a job for
 * a worker or a result for a coordinator, so both sides check what they receive before acting on it:
 *
 * - Coordinator (`checkShippedRun`): a result is accepted only if its run id is exactly the id this
 *   job's run must have (`<env>-<reward>-<learner>-s<seed>-<8 hex>`, the prefix computed from the job
 *   the coordinator itself enqueued), and its files are only the run directory's known files. Nothing
 *   is written or deleted before that, and the run folder must be a direct child of the runs folder.
 * - Worker (`checkJobForWorker`): only data files (`.json`) may travel in a job and be loaded from it;
 *   a simulator module is code, so a job may name one only by a path inside a folder the worker's own
 *   operator allowed (`worker --allow-modules DIR`); a job whose files are over the size limit is
 *   refused. A refused job fails with an input error (exit code 2), which the queue does not retry.
 */
import { realpathSync } from "node:fs";
import { basename, dirname, isAbsolute, join, relative, resolve, sep } from "node:path";
import { GapwatchError, InputError } from "../errors.js";
import { RUN_FILES, runIdPrefix } from "../store/run-store.js";
import type { BatchJob, ShippedRun } from "./types.js";

/** Largest total size of the files one job may carry, and of the files one result may ship (bytes). */
export const JOB_LIMITS = { maxJobFileBytes: 64 * 1024 * 1024, maxResultBytes: 256 * 1024 * 1024 } as const;

const MODULE_EXT = /\.(m|c)?[jt]sx?$/i;
/** The files a job may carry: data (model files .json / .drn, reward files .json), never code. */
export const CARRIED_FILE = /\.(json|drn)$/i;
const KNOWN_RUN_FILES = new Set<string>(Object.values(RUN_FILES));

const cut = (s: string, n = 80) => (s.length > n ? s.slice(0, n) + "..." : s);
/** Control and direction-override characters out of a string that goes into a message. */
const printable = (s: string) => cut(s.replace(/[\u0000-\u001f\u007f-\u009f\u202a-\u202e\u2066-\u2069]/g, "?"));

/** The run id a job's result must carry, as a pattern: the job's own prefix and 8 hex digits. */
export function expectedRunId(job: BatchJob): RegExp {
  const { env, reward, learner, seed } = job.input;
  if (reward === undefined || learner === undefined || seed === undefined) {
    throw new GapwatchError("batch.job", `job ${job.jobId} does not name its reward, learner and seed`, { where: "batch plan" });
  }
  const prefix = runIdPrefix({ env, reward, learner, seed });
  return new RegExp("^" + prefix.replace(/[.*+?^${}()|[\]\\]/g, "\\$&") + "[0-9a-f]{8}$");
}

/** The run folder for `runId` inside `runsDir`, refusing anything that is not a plain direct child. */
export function runFolderInside(runsDir: string, runId: string): string {
  const root = resolve(runsDir);
  const dir = join(root, runId);
  if (!/^[A-Za-z0-9_.-]{1,200}$/.test(runId) || runId === "." || runId === ".." || runId !== basename(runId) || dirname(dir) !== root || runId.startsWith(".")) {
    throw new GapwatchError("batch.badResult", `refused a result with run id "${printable(runId)}": not a folder name inside the runs folder`, { where: "job return value" });
  }
  return dir;
}

/** Coordinator side: throw unless `shipped` is a well-formed result of `job`. */
export function checkShippedRun(job: BatchJob, shipped: unknown): ShippedRun {
  const bad = (what: string) => new GapwatchError("batch.badResult", `refused the result of job ${job.jobId}: ${what}`, { where: "job return value" });
  if (!shipped || typeof shipped !== "object") throw bad("it is not an object");
  const s = shipped as { runId?: unknown; files?: unknown };
  if (typeof s.runId !== "string") throw bad("it has no run id");
  if (!expectedRunId(job).test(s.runId)) throw bad(`run id "${printable(s.runId)}" is not the id of this job's run (${runIdPrefix(job.input as Required<typeof job.input>)}<8 hex digits>)`);
  if (!s.files || typeof s.files !== "object" || Array.isArray(s.files)) throw bad("it carries no files");
  const files: Record<string, string> = Object.create(null) as Record<string, string>;
  let bytes = 0;
  for (const [name, text] of Object.entries(s.files as Record<string, unknown>)) {
    if (!KNOWN_RUN_FILES.has(name)) throw bad(`file "${printable(name)}" is not a run file (${[...KNOWN_RUN_FILES].join(", ")})`);
    if (typeof text !== "string") throw bad(`file ${name} is not text`);
    bytes += Buffer.byteLength(text);
    if (bytes > JOB_LIMITS.maxResultBytes) throw bad(`its files are over ${JOB_LIMITS.maxResultBytes} bytes`);
    files[name] = text;
  }
  return { runId: s.runId, files };
}

export interface WorkerPolicy {
  /** Folders whose simulator modules jobs may name (`worker --allow-modules`); none: modules refused. */
  allowModules?: string[];
  /** Largest total size of a job's carried files in bytes (default JOB_LIMITS.maxJobFileBytes). */
  maxJobFileBytes?: number;
}

function inside(file: string, dir: string): boolean {
  const rel = relative(dir, file);
  return rel !== "" && !rel.startsWith("..") && !isAbsolute(rel) && !rel.split(sep).includes("..");
}

function realOrResolved(p: string): string {
  try {
    return realpathSync(p);
  } catch {
    return resolve(p);
  }
}

/** Worker side: throw an InputError (not retried) unless the job is one this worker may run. */
export function checkJobForWorker(data: unknown, policy: WorkerPolicy = {}): BatchJob {
  const where = "queued job";
  const d = data as { format?: unknown; job?: unknown } | undefined;
  if (!d || typeof d !== "object" || d.format !== "gapwatch-job/1" || !d.job || typeof d.job !== "object") {
    throw new InputError("batch.job", "not a gapwatch job (format gapwatch-job/1)", where);
  }
  const job = d.job as BatchJob;
  const input = job.input as unknown as Record<string, unknown> | undefined;
  if (!input || typeof input !== "object" || typeof input.env !== "string" || input.env === "") throw new InputError("batch.job", "the job names no environment", where);
  if (input.reward !== undefined && typeof input.reward !== "string") throw new InputError("batch.job", "the job's reward is not a name or a file", where);
  const env = input.env;
  const reward = input.reward as string | undefined;
  const files = job.files ?? {};
  if (typeof files !== "object" || Array.isArray(files)) throw new InputError("batch.jobFile", "the job's files are not a map of names to texts", where);
  if (job.envFile !== undefined && (typeof job.envFile !== "string" || !Object.prototype.hasOwnProperty.call(files, job.envFile))) {
    throw new InputError("batch.jobFile", "the job names a family member it does not carry", where);
  }
  const limit = policy.maxJobFileBytes ?? JOB_LIMITS.maxJobFileBytes;
  let bytes = 0;
  for (const [spec, text] of Object.entries(files)) {
    if (!CARRIED_FILE.test(spec)) {
      throw new InputError("batch.jobFile", `the job carries "${printable(spec)}": only data files (.json, .drn) may travel in a job; a simulator module must already be on the worker`, where);
    }
    if (spec !== env && spec !== reward && spec !== job.envFile) throw new InputError("batch.jobFile", `the job carries "${printable(spec)}", which its config does not name`, where);
    if (typeof text !== "string") throw new InputError("batch.jobFile", `the job's file "${printable(spec)}" is not text`, where);
    bytes += Buffer.byteLength(text);
    if (bytes > limit) throw new InputError("batch.jobSize", `the job's files are over the limit of ${limit} bytes`, where);
  }
  if (reward !== undefined && MODULE_EXT.test(reward)) throw new InputError("batch.jobFile", `the job's reward "${printable(reward)}" names code; a reward is a variant name or a .json file`, where);
  if (MODULE_EXT.test(env)) {
    const allowed = (policy.allowModules ?? []).map(realOrResolved);
    const file = realOrResolved(env);
    if (!allowed.some((dir) => inside(file, dir))) {
      const hint = allowed.length ? `it is outside the allowed folders (${allowed.map((a) => cut(a)).join(", ")})` : "this worker allows no modules";
      throw new InputError("batch.moduleNotAllowed", `the job names simulator module "${printable(env)}" but ${hint}; start the worker with --allow-modules DIR for a folder you trust`, where);
    }
  }
  return job;
}
