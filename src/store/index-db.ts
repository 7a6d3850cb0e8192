/**
 * The run index: one SQLite file, `<runsDir>/index.db` (better-sqlite3), listing every run and every
 * comparison stored under the runs directory. The run directories are the source of truth; the index
 * is a cache that `rebuildIndex` regenerates from them, and `openIndex` rebuilds it automatically when
 * the file is missing. Rows are keyed by run id / comparison id, so recording the same run twice
 * (a resubmitted sweep, a job retried after a worker died) updates one row and never duplicates it.
 *
 * Only the process that owns the runs directory writes here (the local `compare` coordinator, or the
 * Redis coordinator, which writes run directories itself); WAL mode and a busy timeout let a
 * concurrent `gapwatch runs` read while a sweep is writing.
 */
import Database from "better-sqlite3";
import { existsSync, mkdirSync, readdirSync, readFileSync, statSync } from "node:fs";
import { basename, join, resolve } from "node:path";
import { InputError } from "../errors.js";
import { isHiddenRunFolder, readRun, RUN_FILES } from "./run-store.js";
import type { RunResult, RunSummary } from "../run/schema.js";

export const INDEX_FILE = "index.db";
export const COMPARISON_FILE = "comparison.json";

export interface RunRow {
  runId: string;
  env: string;
  reward: string;
  learner: string;
  seed: number;
  steps: number;
  status: string;
  verdict: string;
  /** Final normalized scores (null when the run recorded no checkpoint). */
  designer: number | null;
  intent: number | null;
  alerts: number;
  runDir: string;
  /** ISO time the run finished (summary.json), else when it was indexed. */
  time: string;
  /** External runs (`gapwatch ingest`): the source files' names, comma-separated. Absent for trained runs. */
  source?: string;
}

export interface ComparisonRow {
  id: string;
  env: string;
  rewards: string[];
  learners: string[];
  seeds: number[];
  runs: number;
  failed: number;
  ranking: string[];
  dir: string;
  time: string;
}

export interface RunFilter {
  env?: string;
  reward?: string;
  learner?: string;
  verdict?: string;
}

const SCHEMA = `
CREATE TABLE IF NOT EXISTS runs (
  run_id TEXT PRIMARY KEY,
  env TEXT NOT NULL,
  reward TEXT NOT NULL,
  learner TEXT NOT NULL,
  seed INTEGER NOT NULL,
  steps INTEGER NOT NULL,
  status TEXT NOT NULL,
  verdict TEXT NOT NULL,
  designer REAL,
  intent REAL,
  alerts INTEGER NOT NULL,
  run_dir TEXT NOT NULL,
  time TEXT NOT NULL,
  source TEXT
);
CREATE INDEX IF NOT EXISTS runs_env ON runs (env, reward, verdict);
CREATE TABLE IF NOT EXISTS comparisons (
  id TEXT PRIMARY KEY,
  env TEXT NOT NULL,
  rewards TEXT NOT NULL,
  learners TEXT NOT NULL,
  seeds TEXT NOT NULL,
  runs INTEGER NOT NULL,
  failed INTEGER NOT NULL,
  ranking TEXT NOT NULL,
  dir TEXT NOT NULL,
  time TEXT NOT NULL
);
CREATE TABLE IF NOT EXISTS comparison_runs (
  comparison_id TEXT NOT NULL,
  run_id TEXT NOT NULL,
  PRIMARY KEY (comparison_id, run_id)
);
`;

function finishedAt(runDir: string): string | null {
  try {
    const s = JSON.parse(readFileSync(join(runDir, RUN_FILES.summary), "utf8")) as RunSummary;
    return typeof s.finishedAt === "string" ? s.finishedAt : null;
  } catch {
    return null;
  }
}

export function runRowOf(result: RunResult, time?: string): RunRow {
  return {
    runId: result.runId,
    env: result.config.env,
    reward: result.config.reward,
    learner: result.config.learner,
    seed: result.config.seed,
    steps: result.steps,
    status: result.status,
    verdict: result.verdict,
    designer: result.final ? result.final.designerNorm : null,
    intent: result.final ? result.final.intentNorm : null,
    alerts: result.alerts.length,
    runDir: result.runDir,
    time: time ?? finishedAt(result.runDir) ?? new Date().toISOString(),
    ...(result.source ? { source: sourceLabel(result.source.files.map((f) => f.path)) } : {}),
  };
}

/** The names of an external run's source files, for the listing. */
export function sourceLabel(paths: readonly string[]): string {
  return paths.map((p) => basename(p)).join(", ");
}

/** Rows as SQLite gives them: a null source (trained run) is dropped so trained rows keep their shape. */
function rowOut(r: RunRow & { source?: string | null }): RunRow {
  if (r.source === null || r.source === undefined) {
    const { source: _drop, ...rest } = r;
    return rest;
  }
  return r;
}

/** The comparison document fields the index reads (see src/batch/compare.ts). */
interface ComparisonDocLike {
  id: string;
  env: string;
  config: { rewards: string[]; learners: string[]; seeds: number[] };
  ranking: string[];
  runDirs: { runId: string }[];
  failed?: unknown[];
  createdAt?: string;
}

export class RunIndex {
  readonly file: string;
  private readonly db: Database.Database;

  /** `inMemory`: a throw-away index that writes nothing to disk (for reading commands when there is no index file). */
  constructor(readonly runsDir: string, opts: { inMemory?: boolean } = {}) {
    const dir = resolve(runsDir);
    this.file = join(dir, INDEX_FILE);
    if (opts.inMemory) {
      this.db = new Database(":memory:");
      this.db.exec(SCHEMA);
      return;
    }
    try {
      mkdirSync(dir, { recursive: true });
    } catch (err) {
      throw new InputError("store.runsDir", `cannot create the runs directory: ${(err as Error).message}; pass a writable --runs-dir`, dir);
    }
    try {
      this.db = new Database(this.file);
      this.db.pragma("journal_mode = WAL");
      this.db.pragma("busy_timeout = 5000");
      this.db.exec(SCHEMA);
      // An index written before external runs existed has no source column: add it.
      if (!(this.db.prepare("PRAGMA table_info(runs)").all() as { name: string }[]).some((c) => c.name === "source")) this.db.exec("ALTER TABLE runs ADD COLUMN source TEXT");
    } catch (err) {
      throw new InputError("store.index", `cannot open the run index: ${(err as Error).message}; delete it and run \`gapwatch runs --rebuild\``, this.file);
    }
  }

  recordRun(result: RunResult, time?: string): void {
    this.upsertRun(runRowOf(result, time));
  }

  upsertRun(r: RunRow): void {
    this.db
      .prepare(
        `INSERT INTO runs (run_id, env, reward, learner, seed, steps, status, verdict, designer, intent, alerts, run_dir, time, source)
         VALUES (@runId, @env, @reward, @learner, @seed, @steps, @status, @verdict, @designer, @intent, @alerts, @runDir, @time, @source)
         ON CONFLICT(run_id) DO UPDATE SET env=excluded.env, reward=excluded.reward, learner=excluded.learner, seed=excluded.seed,
           steps=excluded.steps, status=excluded.status, verdict=excluded.verdict, designer=excluded.designer, intent=excluded.intent,
           alerts=excluded.alerts, run_dir=excluded.run_dir, time=excluded.time, source=excluded.source`,
      )
      .run({ ...r, source: r.source ?? null });
  }

  recordComparison(doc: ComparisonDocLike, dir: string, time = doc.createdAt ?? new Date().toISOString()): void {
    const tx = this.db.transaction(() => {
      this.db
        .prepare(
          `INSERT INTO comparisons (id, env, rewards, learners, seeds, runs, failed, ranking, dir, time)
           VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?)
           ON CONFLICT(id) DO UPDATE SET env=excluded.env, rewards=excluded.rewards, learners=excluded.learners, seeds=excluded.seeds,
             runs=excluded.runs, failed=excluded.failed, ranking=excluded.ranking, dir=excluded.dir, time=excluded.time`,
        )
        .run(
          doc.id,
          doc.env,
          JSON.stringify(doc.config.rewards),
          JSON.stringify(doc.config.learners),
          JSON.stringify(doc.config.seeds),
          doc.runDirs.length,
          doc.failed?.length ?? 0,
          JSON.stringify(doc.ranking),
          resolve(dir),
          time,
        );
      this.db.prepare("DELETE FROM comparison_runs WHERE comparison_id = ?").run(doc.id);
      const ins = this.db.prepare("INSERT OR IGNORE INTO comparison_runs (comparison_id, run_id) VALUES (?, ?)");
      for (const r of doc.runDirs) ins.run(doc.id, r.runId);
    });
    tx();
  }

  listRuns(filter: RunFilter = {}): RunRow[] {
    const where: string[] = [];
    const args: string[] = [];
    for (const key of ["env", "reward", "learner", "verdict"] as const) {
      const v = filter[key];
      if (v !== undefined) {
        where.push(`${key} = ?`);
        args.push(v);
      }
    }
    const sql = `SELECT run_id AS runId, env, reward, learner, seed, steps, status, verdict, designer, intent, alerts, run_dir AS runDir, time, source
                 FROM runs ${where.length ? "WHERE " + where.join(" AND ") : ""} ORDER BY env, reward, learner, seed, run_id`;
    return (this.db.prepare(sql).all(...args) as (RunRow & { source: string | null })[]).map(rowOut);
  }

  listComparisons(filter: { env?: string } = {}): ComparisonRow[] {
    const rows = (
      filter.env === undefined
        ? this.db.prepare("SELECT * FROM comparisons ORDER BY time, id").all()
        : this.db.prepare("SELECT * FROM comparisons WHERE env = ? ORDER BY time, id").all(filter.env)
    ) as Record<string, unknown>[];
    return rows.map((r) => ({
      id: String(r.id),
      env: String(r.env),
      rewards: JSON.parse(String(r.rewards)),
      learners: JSON.parse(String(r.learners)),
      seeds: JSON.parse(String(r.seeds)),
      runs: Number(r.runs),
      failed: Number(r.failed),
      ranking: JSON.parse(String(r.ranking)),
      dir: String(r.dir),
      time: String(r.time),
    }));
  }

  /** Run ids recorded for one comparison. */
  comparisonRuns(id: string): string[] {
    return (this.db.prepare("SELECT run_id FROM comparison_runs WHERE comparison_id = ? ORDER BY run_id").all(id) as { run_id: string }[]).map((r) => r.run_id);
  }

  /**
   * Empty the index and re-read every run directory (a folder with manifest.json) and every
   * comparison directory (a folder with comparison.json) directly under the runs directory.
   * Unreadable folders are skipped and counted.
   */
  rebuild(): { runs: number; comparisons: number; skipped: string[] } {
    const dir = resolve(this.runsDir);
    const entries = existsSync(dir) ? readdirSync(dir, { withFileTypes: true }).filter((e) => e.isDirectory() && !isHiddenRunFolder(e.name)).map((e) => e.name).sort() : [];
    const skipped: string[] = [];
    let runs = 0;
    let comparisons = 0;
    const tx = this.db.transaction(() => {
      this.db.exec("DELETE FROM runs; DELETE FROM comparisons; DELETE FROM comparison_runs;");
      for (const name of entries) {
        const d = join(dir, name);
        try {
          if (existsSync(join(d, RUN_FILES.manifest))) {
            this.recordRun(readRun(d));
            runs++;
          } else if (existsSync(join(d, COMPARISON_FILE))) {
            const doc = JSON.parse(readFileSync(join(d, COMPARISON_FILE), "utf8")) as ComparisonDocLike;
            this.recordComparison(doc, d);
            comparisons++;
          }
        } catch {
          skipped.push(name);
        }
      }
    });
    tx();
    return { runs, comparisons, skipped };
  }

  close(): void {
    this.db.close();
  }
}

/** Open `<runsDir>/index.db`; when the file does not exist yet it is created and rebuilt from the run directories. */
export function openIndex(runsDir: string): RunIndex {
  const missing = !existsSync(join(resolve(runsDir), INDEX_FILE));
  const ix = new RunIndex(runsDir);
  if (missing) ix.rebuild();
  return ix;
}

/**
 * Open the index of an existing runs folder for reading, creating nothing: a folder that does not exist
 * is an input error (a mistyped --runs-dir used to create a folder and an empty index); a folder
 * without index.db is read into a throw-away in-memory index (`persisted: false`).
 */
export function openIndexForReading(runsDir: string): { index: RunIndex; persisted: boolean } {
  const dir = resolve(runsDir);
  if (!existsSync(dir) || !statSync(dir).isDirectory()) {
    throw new InputError("store.runsDirMissing", `there is no runs folder here; pass the --runs-dir that train or compare wrote to (default ./runs)`, dir);
  }
  if (existsSync(join(dir, INDEX_FILE))) return { index: new RunIndex(dir), persisted: true };
  const index = new RunIndex(dir, { inMemory: true });
  index.rebuild();
  return { index, persisted: false };
}

/** Record one finished run in its runs directory's index (opens and closes the database). */
export function indexRun(runsDir: string, result: RunResult): void {
  const ix = openIndex(runsDir);
  try {
    ix.recordRun(result);
  } finally {
    ix.close();
  }
}
