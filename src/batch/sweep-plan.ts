/**
 * Sweeps on a job scheduler: a plan file lists every run of a sweep (its config input and its
 * content-addressed run id) so an array job can run run I in its own process (`train --plan FILE
 * --index I`), and `compare --collect` can build the comparison from the finished run folders.
 *
 * Plan file (JSON, ours): { format: "gapwatch-plan/1", id, sweep: {env, rewards, learners, seeds,
 * steps, base, maxStates, bootstrapSeed, reps}, runs: [{index, cell: {reward, learner, seed}, jobId,
 * runId, input}] }. Run ids include the inputs' content hashes, so a task whose inputs changed since
 * the plan was written is refused instead of filling the plan with a different run.
 */
import { existsSync, mkdirSync, readFileSync } from "node:fs";
import { dirname, join } from "node:path";
import { InputError } from "../errors.js";
import { readRun, RUN_FILES } from "../store/run-store.js";
import { writeJsonAtomic } from "../store/atomic.js";
import type { TrainConfigInput } from "../run/schema.js";
import { canonicalJson } from "../util/canonical-json.js";
import { resolveTrainConfig } from "../train/run.js";
import { runFolderInside } from "./job-guard.js";
import { planSweep, sha256, type SweepSpec } from "./plan.js";
import type { BatchJob, RunOutcome } from "./types.js";

export const PLAN_FORMAT = "gapwatch-plan/1";

export interface PlanSweep extends SweepSpec {
  bootstrapSeed: number;
  reps?: number;
}

export interface PlanRun {
  index: number;
  cell: BatchJob["cell"];
  jobId: string;
  runId: string;
  input: TrainConfigInput;
}

export interface PlanFile {
  format: typeof PLAN_FORMAT;
  id: string;
  sweep: PlanSweep;
  runs: PlanRun[];
}

/** Plan a sweep: every run's config input, job id and run id (the inputs are read and hashed now). */
export async function makePlan(sweep: PlanSweep): Promise<PlanFile> {
  const jobs = planSweep(sweep);
  const runs: PlanRun[] = [];
  for (const [index, job] of jobs.entries()) {
    const { runId } = await resolveTrainConfig(job.input, { maxStates: sweep.maxStates });
    runs.push({ index, cell: job.cell, jobId: job.jobId, runId, input: job.input });
  }
  const id = "plan-" + sha256(canonicalJson({ sweep, runs: runs.map((r) => r.runId) })).slice(0, 12);
  return { format: PLAN_FORMAT, id, sweep, runs };
}

export function writePlan(file: string, plan: PlanFile): void {
  mkdirSync(dirname(file), { recursive: true });
  writeJsonAtomic(file, plan);
}

/** Read and check a plan file; bad input is one InputError naming the file and the key. */
export function readPlan(file: string): PlanFile {
  if (!existsSync(file)) throw new InputError("plan.notFound", "plan file not found; write one with compare --plan FILE", file);
  let doc: unknown;
  try {
    doc = JSON.parse(readFileSync(file, "utf8"));
  } catch (err) {
    throw new InputError("plan.json", `not valid JSON: ${(err as Error).message}`, file);
  }
  const d = doc as Partial<PlanFile> | null;
  if (!d || typeof d !== "object" || d.format !== PLAN_FORMAT) throw new InputError("plan.format", `not a plan file (format must be "${PLAN_FORMAT}")`, `${file}: format`);
  if (!d.sweep || typeof d.sweep !== "object" || typeof d.sweep.env !== "string") throw new InputError("plan.sweep", "the plan has no sweep with an env", `${file}: sweep`);
  if (!Array.isArray(d.runs) || d.runs.length === 0) throw new InputError("plan.runs", "the plan lists no runs", `${file}: runs`);
  d.runs.forEach((r, i) => {
    const ok = r && typeof r === "object" && r.index === i && typeof r.runId === "string" && typeof r.jobId === "string" && r.input && typeof r.input.env === "string" && r.cell && typeof r.cell.reward === "string";
    if (!ok) throw new InputError("plan.run", `run ${i} is malformed (index, cell, jobId, runId, input)`, `${file}: runs[${i}]`);
  });
  return d as PlanFile;
}

/** The plan's run `index`, or a clear error naming the valid range. */
export function planRun(plan: PlanFile, index: number, where = "--index"): PlanRun {
  if (!Number.isInteger(index) || index < 0 || index >= plan.runs.length) {
    throw new InputError("plan.index", `index ${index} is outside the plan's runs 0..${plan.runs.length - 1}`, where);
  }
  return plan.runs[index];
}

/** The plan's jobs, in plan order (what `compare` aggregates). */
export function planJobs(plan: PlanFile): BatchJob[] {
  return plan.runs.map((r) => ({ jobId: r.jobId, input: r.input, cell: r.cell, ...(plan.sweep.maxStates !== undefined ? { maxStates: plan.sweep.maxStates } : {}) }));
}

/**
 * Read the plan's runs from `runsDir`: a complete run is an outcome; a run folder that is absent, or
 * not complete, is reported by index in `missing` and as a failed outcome (code plan.missing).
 */
export function collectPlan(plan: PlanFile, runsDir: string): { outcomes: RunOutcome[]; missing: number[] } {
  const missing: number[] = [];
  const outcomes = plan.runs.map((r): RunOutcome => {
    const dir = runFolderInside(runsDir, r.runId);
    const result = existsSync(join(dir, RUN_FILES.manifest)) ? readRun(dir) : null;
    if (result && result.status === "complete") return { jobId: r.jobId, cell: r.cell, ok: true, result };
    missing.push(r.index);
    const message = result ? `run ${r.index} (${r.runId}) is ${result.status}: ${result.reason}` : `run ${r.index} (${r.runId}) has no run folder yet`;
    return { jobId: r.jobId, cell: r.cell, ok: false, error: { code: "plan.missing", message, where: dir, exitCode: 1 } };
  });
  return { outcomes, missing };
}
