/**
 * What a report reads, and the loading of it from disk. Reports never recompute results: they read
 * a run directory (manifest.json, checkpoints.jsonl, alerts.jsonl, summary.json) or a comparison
 * directory (comparison.json plus run directories), and, when present beside them, audit.json and
 * pressure.json. Every section is optional; documents written by other commands are read leniently
 * (an interval may be `[lo, hi]`, `{lower, upper}` or `{lo, hi}`).
 */
import { existsSync, readdirSync, readFileSync, statSync } from "node:fs";
import { basename, dirname, isAbsolute, join, resolve } from "node:path";
import { InputError } from "../errors.js";
import type { FiniteModel } from "../model/types.js";
import { readRun, RUN_FILES } from "../store/run-store.js";
import type { RunManifest, RunPolicyFile, RunResult } from "../run/schema.js";

/** audit.json (from `gapwatch audit`). */
export interface AuditDoc {
  env?: string;
  reward?: string;
  findings?: { check: string; severity: string; message: string; evidence?: Record<string, unknown> }[];
  regret?: number;
  regretNorm?: number;
  loops?: { meanDesignerPerStep?: number; meanIntentPerStep?: number; states?: string[]; actions?: string[]; stateIds?: number[] }[];
  [key: string]: unknown;
}

/** pressure.json (from `gapwatch pressure`): peak / onset may be a strength or a point. */
export interface PressureDoc {
  env?: string;
  reward?: string;
  points?: { strength: number; kl?: number; designer: number; intent: number }[];
  peak?: unknown;
  onset?: unknown;
  [key: string]: unknown;
}

export interface ScoreStats {
  mean?: number;
  median?: number;
  iqm?: number;
  ci?: unknown;
}

/** comparison.json (from `gapwatch compare`). */
export interface ComparisonDoc {
  env?: string;
  variants: {
    reward: string;
    runs?: unknown;
    verdicts?: unknown;
    alertRate?: { p?: number; ci?: unknown };
    designer?: ScoreStats;
    intent?: ScoreStats;
  }[];
  ranking?: unknown;
  pairs?: { a: string; b: string; probabilityOfImprovement: number | null; ci?: unknown }[];
  /** Where the runs are: `{reward, learner, seed, runId, runDir}` per run. */
  runDirs?: unknown;
  [key: string]: unknown;
}

export interface RunReportData {
  run: RunResult;
  manifest?: RunManifest | null;
  audit?: AuditDoc | null;
  pressure?: PressureDoc | null;
  /** The compiled environment, for drawing audit evidence on its map or track. */
  model?: FiniteModel | null;
  /** The reward variant's own name when `config.reward` is a reward file (read from the file). */
  rewardName?: string | null;
  /** policy.json's greedy action name per state (null on terminal states), for drawing the learned route. */
  policy?: (string | null)[] | null;
  /** ISO time stamp shown in the footer (default: now). */
  generatedAt?: string;
}

export interface ComparisonReportData {
  comparison: ComparisonDoc;
  /** The variants' runs (curves for the small multiples), matched to variants by `config.reward`. */
  runs: RunResult[];
  manifests?: RunManifest[];
  audit?: AuditDoc | null;
  pressure?: PressureDoc | null;
  model?: FiniteModel | null;
  /** Where the comparison was read from (shown in the reproduce section). */
  dir?: string;
  generatedAt?: string;
}

export const COMPARISON_FILE = "comparison.json";
export const AUDIT_FILE = "audit.json";
export const PRESSURE_FILE = "pressure.json";

/** `[lo, hi]`, `{lower, upper}`, `{lo, hi}` or `{low, high}` -> [lo, hi] (NaN when absent). */
export function interval(ci: unknown): [number, number] {
  if (Array.isArray(ci) && ci.length >= 2) return [Number(ci[0]), Number(ci[1])];
  if (ci && typeof ci === "object") {
    const o = ci as Record<string, unknown>;
    const lo = o.lower ?? o.lo ?? o.low;
    const hi = o.upper ?? o.hi ?? o.high;
    if (lo !== undefined && hi !== undefined) return [Number(lo), Number(hi)];
  }
  return [NaN, NaN];
}

/** A strength from `peak` / `onset`: a number, or an object with `strength`. */
export function strengthOf(x: unknown): number | null {
  if (typeof x === "number" && Number.isFinite(x)) return x;
  if (x && typeof x === "object" && typeof (x as { strength?: unknown }).strength === "number") return (x as { strength: number }).strength;
  return null;
}

function readJsonFile<T>(file: string): T {
  try {
    return JSON.parse(readFileSync(file, "utf8")) as T;
  } catch (err) {
    throw new InputError("report.read", `cannot read ${basename(file)}: ${(err as Error).message}; regenerate it or remove it from the folder`, file);
  }
}

function optionalJson<T>(file: string | undefined): T | null {
  return file && existsSync(file) ? readJsonFile<T>(file) : null;
}

export type DirKind = "run" | "comparison";

/** What kind of results folder `dir` is. */
export function dirKind(dir: string): DirKind {
  if (!existsSync(dir) || !statSync(dir).isDirectory()) {
    throw new InputError("report.dir", "no such folder; pass a run directory (with manifest.json) or a comparison directory (with comparison.json)", dir);
  }
  if (existsSync(join(dir, COMPARISON_FILE))) return "comparison";
  if (existsSync(join(dir, RUN_FILES.manifest))) return "run";
  throw new InputError("report.dir", "neither a run directory (manifest.json) nor a comparison directory (comparison.json)", dir);
}

/** Run directories at most two levels below `dir` (a comparison keeps its runs beside comparison.json or under runs/). */
export function findRunDirs(dir: string, depth = 2): string[] {
  const out: string[] = [];
  const walk = (d: string, left: number) => {
    let names: string[];
    try {
      names = readdirSync(d).sort();
    } catch {
      return;
    }
    for (const n of names) {
      if (n.startsWith(".")) continue; // temporary and set-aside run folders (src/store/run-store.ts)
      const p = join(d, n);
      let isDir = false;
      try {
        isDir = statSync(p).isDirectory();
      } catch {
        continue;
      }
      if (!isDir) continue;
      if (existsSync(join(p, RUN_FILES.manifest))) out.push(p);
      else if (left > 1) walk(p, left - 1);
    }
  };
  walk(dir, depth);
  return out;
}

/** Run references a comparison names (`variants[].runs` as ids or paths), resolved against its folder. */
function namedRunDirs(dir: string, doc: ComparisonDoc): string[] {
  const out: string[] = [];
  const runDirs = Array.isArray(doc.runDirs) ? (doc.runDirs as unknown[]) : [];
  for (const r of runDirs) {
    const d = r && typeof r === "object" ? (r as { runDir?: unknown; runId?: unknown }) : {};
    const cands = [d.runDir, typeof d.runId === "string" ? join(dir, d.runId) : undefined, typeof d.runId === "string" ? join(dirname(resolve(dir)), d.runId) : undefined];
    const hit = cands.find((c): c is string => typeof c === "string" && existsSync(join(c, RUN_FILES.manifest)));
    if (hit) out.push(hit);
  }
  for (const v of doc.variants ?? []) {
    if (!Array.isArray(v.runs)) continue;
    for (const r of v.runs) {
      const ref = typeof r === "string" ? r : r && typeof r === "object" ? ((r as { runDir?: unknown; runId?: unknown }).runDir ?? (r as { runId?: unknown }).runId) : undefined;
      if (typeof ref !== "string") continue;
      for (const cand of isAbsolute(ref) ? [ref] : [join(dir, ref), join(dir, "runs", ref), join(dirname(resolve(dir)), ref)]) {
        if (existsSync(join(cand, RUN_FILES.manifest))) {
          out.push(cand);
          break;
        }
      }
    }
  }
  return out;
}

export interface LoadOptions {
  /** audit.json to include (default: `<dir>/audit.json` when present). */
  audit?: string | AuditDoc | null;
  /** pressure.json to include (default: `<dir>/pressure.json` when present). */
  pressure?: string | PressureDoc | null;
  model?: FiniteModel | null;
}

function side<T>(dir: string, given: string | T | null | undefined, file: string): T | null {
  if (given === null) return null;
  if (typeof given === "string") {
    if (!existsSync(given)) throw new InputError("report.input", "no such file", given);
    return readJsonFile<T>(given);
  }
  if (given !== undefined) return given;
  return optionalJson<T>(join(dir, file));
}

export function loadRunReport(dir: string, opts: LoadOptions = {}): RunReportData {
  const run = readRun(dir);
  const manifest = optionalJson<RunManifest>(join(dir, RUN_FILES.manifest));
  const policyDoc = optionalJson<Partial<RunPolicyFile>>(join(dir, RUN_FILES.policy));
  return {
    run,
    manifest,
    policy: Array.isArray(policyDoc?.greedy) ? policyDoc.greedy : null,
    audit: side<AuditDoc>(dir, opts.audit, AUDIT_FILE),
    pressure: side<PressureDoc>(dir, opts.pressure, PRESSURE_FILE),
    model: opts.model ?? null,
  };
}

export function loadComparisonReport(dir: string, opts: LoadOptions = {}): ComparisonReportData {
  const file = join(dir, COMPARISON_FILE);
  const comparison = readJsonFile<ComparisonDoc>(file);
  if (!comparison || !Array.isArray(comparison.variants)) {
    throw new InputError("report.comparison", "comparison.json has no variants array; regenerate it with gapwatch compare", file);
  }
  const dirs = [...new Set([...namedRunDirs(dir, comparison), ...findRunDirs(dir)].map((d) => resolve(d)))];
  const runs: RunResult[] = [];
  const manifests: RunManifest[] = [];
  for (const d of dirs) {
    runs.push(readRun(d));
    const m = optionalJson<RunManifest>(join(d, RUN_FILES.manifest));
    if (m) manifests.push(m);
  }
  return {
    comparison,
    runs,
    manifests,
    audit: side<AuditDoc>(dir, opts.audit, AUDIT_FILE),
    pressure: side<PressureDoc>(dir, opts.pressure, PRESSURE_FILE),
    model: opts.model ?? null,
    dir: resolve(dir),
  };
}
