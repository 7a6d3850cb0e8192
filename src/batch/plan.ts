/**
 * The sweep matrix: rewards x learners x seeds, every variant on the same seed list (a paired design),
 * one `BatchJob` per cell, in a fixed order (reward, then learner, then seed). Pure apart from reading
 * the input files a job has to carry (`shipFiles`).
 */
import { createHash } from "node:crypto";
import { existsSync, readFileSync } from "node:fs";
import { resolve } from "node:path";
import { InputError } from "../errors.js";
import { canonicalJson } from "../util/canonical-json.js";
import type { TrainConfigInput } from "../run/schema.js";
import { inputsOf } from "../env/inputs.js";
import { fileFamily, isModuleSpec } from "../env/resolve.js";
import { splitLayout, withLayout } from "../env/layout-spec.js";
import type { BatchJob } from "./types.js";

export interface SweepSpec {
  env: string;
  rewards: string[];
  learners: string[];
  seeds: number[];
  steps?: number;
  /** Extra TrainConfigInput keys applied to every run (checkpoints, monitor, ...). */
  base?: Omit<TrainConfigInput, "env" | "reward" | "learner" | "seed" | "steps">;
  /** State bound when `env` is a simulator module (`--max-states`); a load option, not part of a run's config or job id. */
  maxStates?: number;
  /**
   * Layouts as the paired rows (`compare --layouts`): `seeds` then lists layout numbers, each row runs
   * on layout `<env>#<row>` and every run trains with this seed.
   */
  layoutSeed?: number;
}

/** Most runs one sweep may plan: beyond it a typo (--seeds 1000000000) would exhaust memory before any work. */
export const MAX_SWEEP_RUNS = 100_000;

export function sha256(text: string): string {
  return createHash("sha256").update(text).digest("hex");
}

/** Parse "1,2,3" / "1-5" ranges into a seed list; duplicates are an error (they would pair a run with itself). */
export function parseSeedList(text: string, where = "--seed-list"): number[] {
  const out: number[] = [];
  for (const part of text.split(",").map((s) => s.trim()).filter(Boolean)) {
    const m = /^(\d+)(?:-(\d+))?$/.exec(part);
    if (!m) throw new InputError("compare.seeds", `"${part}" is not a seed or a range a-b of non-negative integers`, where);
    const a = Number(m[1]);
    const b = m[2] === undefined ? a : Number(m[2]);
    if (b < a || !Number.isSafeInteger(b)) throw new InputError("compare.seeds", `bad range "${part}"`, where);
    if (out.length + (b - a + 1) > MAX_SWEEP_RUNS) throw new InputError("compare.seeds", `more than ${MAX_SWEEP_RUNS} seeds; a sweep plans at most ${MAX_SWEEP_RUNS} runs`, where);
    for (let s = a; s <= b; s++) out.push(s);
  }
  if (out.length === 0) throw new InputError("compare.seeds", "the seed list is empty; give e.g. 1,2,3 or 1-10", where);
  const dup = out.find((s, i) => out.indexOf(s) !== i);
  if (dup !== undefined) throw new InputError("compare.seeds", `seed ${dup} appears twice; every seed once`, where);
  return out;
}

/** Split a comma list, trimmed, non-empty, no duplicates. */
export function parseList(text: string, flag: string): string[] {
  const out = text.split(",").map((s) => s.trim()).filter(Boolean);
  if (out.length === 0) throw new InputError("compare.list", `${flag} needs at least one name`, flag);
  const dup = out.find((s, i) => out.indexOf(s) !== i);
  if (dup !== undefined) throw new InputError("compare.list", `"${dup}" is listed twice in ${flag}`, flag);
  return out;
}

const isDataFile = (spec: string) => /\.json$/i.test(spec);

function readShipped(spec: string): string {
  const file = resolve(spec);
  if (!existsSync(file)) throw new InputError("env.notFound", "file not found", spec);
  return readFileSync(file, "utf8");
}

/**
 * The data files a job names, keyed by their spec strings: a model-file env (.json or .drn), a reward
 * file (.json), and for a model-file family (`<folder>#N`, a comma list `#N`) the member the layout
 * chose, named in `envFile`.
 */
export function shipFiles(input: TrainConfigInput): { files: Record<string, string>; envFile?: string } {
  const files: Record<string, string> = {};
  let envFile: string | undefined;
  const { base, layout } = splitLayout(input.env);
  const family = isModuleSpec(base) ? null : fileFamily(base);
  if (family) {
    const member = family[layout];
    if (member === undefined) throw new InputError("env.layout", `layout ${layout} does not exist: the family has ${family.length} model files (layouts 0..${family.length - 1})`, input.env);
    files[member] = readShipped(member);
    envFile = member;
  } else if (isDataFile(input.env) || /\.drn$/i.test(input.env)) files[input.env] = readShipped(input.env);
  if (input.reward !== undefined && isDataFile(input.reward)) files[input.reward] = readShipped(input.reward);
  return envFile === undefined ? { files } : { files, envFile };
}

/**
 * Deterministic job id: the same run config and the same inputs (file contents, including a simulator
 * module and its local imports, and gapwatch's version: `inputsHash`, src/env/inputs.ts) always give
 * the same id; an edited input gives a new one, so a resubmission never hits a stale completed job.
 */
export function jobIdOf(input: TrainConfigInput, files: Record<string, string> = {}, inputsHash?: string): string {
  const fileHashes = Object.fromEntries(Object.entries(files).map(([k, v]) => [k, sha256(v)]));
  return "run-" + sha256(canonicalJson({ input, files: fileHashes, ...(inputsHash !== undefined ? { inputs: inputsHash } : {}) })).slice(0, 32);
}

/** The input digest of a job's config, without loading the model (a `.json`/module `--env` is a file; a `--reward` ending in .json that exists is a file). */
export function jobInputsHash(input: TrainConfigInput): string {
  const base = splitLayout(input.env).base;
  const envIsFile = /\.json$/i.test(base) || /\.(m|c)?[jt]sx?$/i.test(base) || fileFamily(base) !== null;
  return inputsOf(input.env, envIsFile, input.reward, false).hash;
}

/** One job per (reward, learner, seed). `ship` reads the input files into the jobs (Redis backend). */
export function planSweep(spec: SweepSpec, opts: { ship?: boolean } = {}): BatchJob[] {
  const total = spec.rewards.length * spec.learners.length * spec.seeds.length;
  if (total > MAX_SWEEP_RUNS) throw new InputError("compare.size", `${spec.rewards.length} rewards x ${spec.learners.length} learners x ${spec.seeds.length} seeds = ${total} runs, more than the ${MAX_SWEEP_RUNS} a sweep may plan`, "--seeds");
  const jobs: BatchJob[] = [];
  const cache = new Map<string, { files: Record<string, string>; envFile?: string; inputs: string }>();
  for (const reward of spec.rewards) {
    for (const learner of spec.learners) {
      for (const seed of spec.seeds) {
        const env = spec.layoutSeed === undefined ? spec.env : withLayout(splitLayout(spec.env).base, seed);
        const input: TrainConfigInput = { ...(spec.base ?? {}), env, reward, learner, seed: spec.layoutSeed ?? seed, ...(spec.steps !== undefined ? { steps: spec.steps } : {}) };
        const key = spec.layoutSeed === undefined ? `${reward}` : `${reward}\u0000${seed}`;
        let hit = cache.get(key);
        if (!hit) cache.set(key, (hit = { ...shipFiles(input), inputs: jobInputsHash(input) }));
        const files = hit.files;
        jobs.push({
          jobId: jobIdOf(input, files, hit.inputs),
          input,
          ...(opts.ship && Object.keys(files).length ? { files } : {}),
          ...(opts.ship && hit.envFile !== undefined ? { envFile: hit.envFile } : {}),
          ...(spec.maxStates !== undefined ? { maxStates: spec.maxStates } : {}),
          cell: { reward, learner, seed },
        });
      }
    }
  }
  return jobs;
}
