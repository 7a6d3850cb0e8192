/**
 * `gapwatch ingest <path>...`: read an external training log (src/ingest), watch it with the
 * noise-aware external monitor (src/monitor/external.ts) and store it as a run directory beside trained
 * runs (src/store), indexed, with an optional HTML report.
 *
 * One-shot: every input is read to its end and validated, the checkpoints pushed, and only then is the
 * run directory written (a staging folder renamed into place), so bad input writes nothing.
 * Follow: the inputs are polled; a checkpoint is pushed once it is FINAL (a later checkpoint exists:
 * for pooled episodes the next window has started), so the records and alerts equal a one-shot read
 * of the finished log; the last checkpoint is pushed when the loop stops (Ctrl-C through `signal`,
 * `untilStep`, or `idleSeconds` without new bytes). The run directory is written when it stops.
 * The clock and the sleep are injectable so tests drive the loop.
 */
import { createHash } from "node:crypto";
import { readFileSync, statSync } from "node:fs";
import { resolve } from "node:path";
import { InputError } from "../errors.js";
import {
  alignSeries,
  defaultWindow,
  IngestSource,
  listEventFiles,
  ownCheckpoints,
  ownLineKind,
  pickSeries,
  poolEpisodes,
  rollingCheckpoints,
  suggestName,
  type IngestCheckpoint,
  type IngestFormat,
  type Series,
  type SourceSnapshot,
  type TableSeries,
} from "../ingest/index.js";
import { ExternalMonitor, normalizeExternal, type ScoreRange } from "../monitor/external.js";
import type { Alert, CheckpointRecord, ExternalRunManifest, ExternalSourceDoc, RunResult, RunStatus, RunSummary } from "../run/schema.js";
import { indexRun } from "../store/index-db.js";
import { externalRunId, readRun, writeExternalRun } from "../store/run-store.js";
import { writeReport } from "../report/write.js";
import { packageVersion } from "../util/paths.js";

export interface IngestClock {
  /** Milliseconds, monotonic enough for idle timing. */
  now(): number;
  sleep(ms: number): Promise<void>;
}

export const systemClock: IngestClock = {
  now: () => Date.now(),
  sleep: (ms) => new Promise((r) => setTimeout(r, ms)),
};

export interface IngestFollowOptions {
  /** Stop once a checkpoint at or beyond this step has been read. */
  untilStep?: number;
  /** Stop after this many seconds without new bytes in any input. */
  idleSeconds?: number;
  /** Poll interval (default 500 ms). */
  pollMs?: number;
}

export interface IngestConfig {
  /** Input files or folders (absolute). */
  paths: string[];
  designer: string;
  intent: string;
  format?: IngestFormat;
  /** Step column of tables. */
  step?: string;
  /** Step window pooling episodes (default: ten typical episodes, see src/ingest/checkpoints.ts). */
  window?: number;
  /** Checkpoint value = mean of the last N episodes by the window end (as trainers log it). */
  rolling?: number;
  /** Run key inside a folder (or an input path) when a name exists in several. */
  run?: string;
  designerRange?: ScoreRange;
  intentRange?: ScoreRange;
  runsDir: string;
  report?: boolean | string;
  /** Present: follow mode. */
  follow?: IngestFollowOptions;
  /** Ctrl-C: the follow loop stops and stores what it has as "interrupted". */
  signal?: { readonly aborted: boolean };
  clock?: IngestClock;
  /** Each alert as it fires (follow mode: while the log is still growing). */
  onAlert?: (a: Alert) => void;
  /** Progress notices (one line each). */
  onNotice?: (text: string) => void;
}

/** One candidate holder of series: an input path and a run key inside it. */
interface Holder {
  label: string;
  path: string;
  series: Map<string, Series>;
  perEpisode: boolean;
}

function holdersOf(paths: readonly string[], snaps: readonly SourceSnapshot[]): Holder[] {
  const out: Holder[] = [];
  snaps.forEach((s, i) => {
    for (const [run, series] of s.runs) out.push({ label: run === "." ? paths[i] : `${paths[i]}/${run}`, path: paths[i], series, perEpisode: s.perEpisode });
  });
  return out;
}

/**
 * The holder of series `name`: the only one that has it, or the one `run` names. Undefined while
 * nothing holds it (follow mode waits); `final` turns that into the one-line error with a did-you-mean.
 */
function findSeries(holders: readonly Holder[], name: string, role: string, run: string | undefined, final: boolean): { holder: Holder; series: Series } | undefined {
  let having = holders.filter((h) => h.series.has(name));
  if (run !== undefined) having = having.filter((h) => h.label === run || h.label.endsWith(`/${run}`));
  if (having.length === 1) return { holder: having[0], series: having[0].series.get(name)! };
  if (having.length > 1) {
    throw new InputError("ingest.run", `the ${role} series ${JSON.stringify(name)} exists in ${having.length} runs (${having.map((h) => JSON.stringify(h.label)).join(", ")}); choose one with --run`, "--run");
  }
  if (!final) return undefined;
  const all = new Map<string, Series>();
  for (const h of holders) for (const [k, v] of h.series) all.set(k, v);
  if (run !== undefined && !holders.some((h) => h.label === run || h.label.endsWith(`/${run}`))) {
    const labels = holders.map((h) => h.label);
    const hint = suggestName(run, labels);
    throw new InputError("ingest.run", `no run ${JSON.stringify(run)}${hint ? ` (did you mean ${JSON.stringify(hint)}?)` : ""}; the runs here are: ${labels.map((l) => JSON.stringify(l)).join(", ") || "none"}`, "--run");
  }
  return { holder: holders[0], series: pickSeries(all, name, role, holders.map((h) => h.path).filter((p, i, a) => a.indexOf(p) === i).join(", ")) };
}

interface Selection {
  checkpoints: IngestCheckpoint[];
  window: number | null;
  perEpisode: boolean;
}

/**
 * Checkpoints of the snapshots so far. Follow mode (`final` false): undefined while a series is missing
 * or the default window cannot be decided yet (fewer than 10 episodes), so it is never changed later.
 */
function checkpointsOf(cfg: IngestConfig, snaps: readonly SourceSnapshot[], final: boolean, fixedWindow: number | undefined): Selection | undefined {
  const holders = holdersOf(cfg.paths, snaps);
  const d = findSeries(holders, cfg.designer, "designer", cfg.run, final);
  const n = findSeries(holders, cfg.intent, "intent", cfg.run, final);
  if (d === undefined || n === undefined) return undefined;
  const where = d.holder.label === n.holder.label ? d.holder.label : `${d.holder.label}, ${n.holder.label}`;
  const format = snaps[cfg.paths.indexOf(d.holder.path)]?.format;
  const own = format === "jsonl" && d.holder === n.holder && d.holder.series.has("designer") && d.holder.series.has("intent") && !d.holder.perEpisode;
  const episodes = d.holder.perEpisode || (own && ownLineKind({ series: d.holder.series } as TableSeries) === "episodes");
  if (episodes) {
    if (d.holder !== n.holder) throw new InputError("ingest.series", "per-episode designer and intent series must come from the same log (one line or row per episode)", where);
    const window = cfg.window ?? fixedWindow ?? (final || d.series.steps.length >= 10 ? defaultWindow(d.series.steps) : undefined);
    if (window === undefined) return final ? { checkpoints: [], window: null, perEpisode: true } : undefined;
    const checkpoints = cfg.rolling !== undefined ? rollingCheckpoints(d.series, n.series, window, cfg.rolling, where) : own ? ownCheckpoints({ series: d.holder.series } as TableSeries, where, { window, designer: d.series, intent: n.series }) : poolEpisodes(d.series, n.series, window, where);
    return { checkpoints, window, perEpisode: true };
  }
  if (own) return { checkpoints: ownCheckpoints({ series: d.holder.series } as TableSeries, where, { designer: d.series, intent: n.series }), window: null, perEpisode: false };
  return { checkpoints: alignSeries(d.series, n.series, where), window: null, perEpisode: false };
}

function sha256File(path: string): { bytes: number; sha256: string } {
  const buf = readFileSync(path);
  return { bytes: buf.length, sha256: createHash("sha256").update(buf).digest("hex") };
}

function sourceFiles(paths: readonly string[], snaps: readonly SourceSnapshot[]): ExternalSourceDoc["files"] {
  const files: string[] = [];
  paths.forEach((p, i) => {
    if (snaps[i]?.format === "tfevents") files.push(...listEventFiles(p).map((r) => r.path));
    else files.push(p);
  });
  return files.map((path) => ({ path, ...sha256File(path) }));
}

function totalBytes(paths: readonly string[]): number {
  let n = 0;
  for (const p of paths) {
    const st = statSync(p);
    if (st.isDirectory()) for (const r of listEventFiles(p)) n += statSync(r.path).size;
    else n += st.size;
  }
  return n;
}

const nullIfNaN = (x: number | null): number | null => (x === null || !Number.isFinite(x) ? null : x);

/** Records, alerts and the summary of a monitored checkpoint list. */
function buildRun(cfg: IngestConfig, monitor: ExternalMonitor, checkpoints: readonly IngestCheckpoint[], runId: string, status: RunStatus) {
  const ranges = { designerRange: cfg.designerRange, intentRange: cfg.intentRange };
  const norm = normalizeExternal(checkpoints, ranges);
  const records: CheckpointRecord[] = monitor.records.map((r, i) => {
    const c = checkpoints[i];
    return {
      step: r.step,
      episodes: c.episodes ?? 0,
      designer: r.designer,
      intent: r.intent,
      designerNorm: norm[i].designerNorm,
      intentNorm: norm[i].intentNorm,
      gap: norm[i].designerNorm - norm[i].intentNorm,
      rank: r.rank,
      external: {
        designerLevel: nullIfNaN(r.designerLevel),
        intentLevel: nullIfNaN(r.intentLevel),
        designerSe: r.designerSe,
        intentSe: r.intentSe,
        ...(c.designerStd !== undefined ? { designerStd: c.designerStd } : {}),
        ...(c.intentStd !== undefined ? { intentStd: c.intentStd } : {}),
      },
    };
  });
  const v = monitor.verdict();
  const last = records[records.length - 1] ?? null;
  const summary: RunSummary = {
    format: "gapwatch-run-summary/1",
    runId,
    status,
    verdict: v.verdict,
    reason: status === "interrupted" ? `interrupted (Ctrl-C) before the log ended; on what was read: ${v.reason}` : v.reason,
    final: last,
    alertCount: monitor.alerts.length,
    firstAlertStep: v.firstAlertStep,
    steps: last?.step ?? 0,
    episodes: records.reduce((a, r) => a + r.episodes, 0),
    checkpointCount: records.length,
    trainSeconds: 0,
    monitorSeconds: 0,
    relative: v.relative,
    finishedAt: new Date().toISOString(),
  };
  return { records, summary };
}

/** The JSON document of `gapwatch ingest`. */
export function ingestDocument(r: RunResult) {
  return {
    run: r.runId,
    runDir: r.runDir,
    status: r.status,
    source: r.source,
    checkpoints: r.checkpoints.map((c) => ({ step: c.step, designer: c.designer, intent: c.intent, designerNorm: c.designerNorm, intentNorm: c.intentNorm, episodes: c.episodes })),
    verdict: r.verdict,
    reason: r.reason,
    alerts: r.alerts.map((a) => ({ step: a.step, kind: a.kind, magnitude: a.magnitude, message: a.message })),
    relative: r.relative ?? false,
  };
}

function checkRange(r: ScoreRange | undefined, flag: string): void {
  if (r !== undefined && (!Number.isFinite(r.low) || !Number.isFinite(r.high) || r.low === r.high)) throw new InputError("ingest.range", `a range needs two different finite numbers, got ${r.low}:${r.high}`, flag);
}

/** Ingest; `doc` is what `ingest --json` prints, `result` the stored run, `report` the HTML file or null. */
export async function runIngest(cfg: IngestConfig) {
  if (cfg.paths.length === 0) throw new InputError("ingest.path", "give at least one log file or folder", "ingest");
  for (const p of cfg.paths) {
    try {
      statSync(p);
    } catch {
      throw new InputError("ingest.path", "no such file or folder", p);
    }
  }
  if (cfg.window !== undefined && !(Number.isFinite(cfg.window) && cfg.window > 0)) throw new InputError("ingest.window", `--window must be a positive number of steps, got ${cfg.window}`, "--window");
  if (cfg.rolling !== undefined && !(Number.isInteger(cfg.rolling) && cfg.rolling >= 1)) throw new InputError("ingest.rolling", `--rolling must be an integer >= 1, got ${cfg.rolling}`, "--rolling");
  checkRange(cfg.designerRange, "--designer-range");
  checkRange(cfg.intentRange, "--intent-range");
  const sources = cfg.paths.map((p) => new IngestSource(p, { format: cfg.format, step: cfg.step }));
  const monitor = new ExternalMonitor({ designerRange: cfg.designerRange, intentRange: cfg.intentRange });
  const pushed: IngestCheckpoint[] = [];
  const push = (c: IngestCheckpoint) => {
    const { alerts } = monitor.push(c);
    pushed.push(c);
    for (const a of alerts) cfg.onAlert?.(a);
  };
  let status: RunStatus = "complete";
  let snaps: SourceSnapshot[];
  let window: number | undefined;
  if (cfg.follow === undefined) {
    snaps = sources.map((s) => s.finish());
  } else {
    const clock = cfg.clock ?? systemClock;
    const pollMs = cfg.follow.pollMs ?? 500;
    snaps = sources.map((s) => s.poll()); // validates what exists at start
    let size = totalBytes(cfg.paths);
    let lastData = clock.now();
    let stop: "idle" | "until" | "interrupt" | null = null;
    let noticed = 0;
    for (;;) {
      const sel = checkpointsOf(cfg, snaps, false, window);
      if (sel !== undefined) {
        if (sel.window !== null) window = sel.window;
        for (let i = pushed.length; i < sel.checkpoints.length - 1; i++) push(sel.checkpoints[i]);
        const lastStep = sel.checkpoints[sel.checkpoints.length - 1]?.step;
        if (cfg.follow.untilStep !== undefined && lastStep !== undefined && lastStep >= cfg.follow.untilStep) stop = "until";
      }
      if (stop === null && cfg.signal?.aborted) stop = "interrupt";
      if (stop === null && cfg.follow.idleSeconds !== undefined && clock.now() - lastData >= cfg.follow.idleSeconds * 1000) stop = "idle";
      if (stop !== null) break;
      await clock.sleep(pollMs);
      const now = totalBytes(cfg.paths);
      if (now !== size) {
        size = now;
        lastData = clock.now();
      }
      snaps = sources.map((s) => s.poll());
      if (pushed.length !== noticed) {
        noticed = pushed.length;
        cfg.onNotice?.(`${pushed.length} checkpoints (to step ${pushed[pushed.length - 1].step}), ${monitor.alerts.length} alerts`);
      }
    }
    if (stop === "idle") snaps = sources.map((s) => s.finish());
    if (stop === "interrupt") status = "interrupted";
    cfg.onNotice?.(stop === "idle" ? `no new data for ${cfg.follow.idleSeconds} s: stopping` : stop === "until" ? `reached step ${cfg.follow.untilStep}: stopping` : "interrupted: storing what was read");
  }
  const sel = checkpointsOf(cfg, snaps, true, window);
  const all = sel?.checkpoints ?? [];
  if (pushed.length > 0 && (all.length < pushed.length || all[pushed.length - 1].step !== pushed[pushed.length - 1].step)) {
    throw new InputError("ingest.changed", "the log changed under the reader (checkpoints already read are gone); follow a log that is only appended to", cfg.paths.join(", "));
  }
  for (let i = pushed.length; i < all.length; i++) push(all[i]);
  const source: ExternalSourceDoc = {
    inputs: cfg.paths.map((p) => resolve(p)),
    files: sourceFiles(cfg.paths, snaps),
    format: snaps[0]?.format ?? cfg.format ?? "tfevents",
    mapping: { designer: cfg.designer, intent: cfg.intent, step: cfg.step ?? null, run: cfg.run ?? null },
    ranges: { designer: cfg.designerRange ?? null, intent: cfg.intentRange ?? null },
    window: sel?.window ?? null,
    rolling: cfg.rolling ?? null,
  };
  const runId = externalRunId(source);
  const { records, summary } = buildRun(cfg, monitor, pushed, runId, status);
  const manifest: ExternalRunManifest = { format: "gapwatch-run/1", kind: "external", runId, source, packageVersion: packageVersion(), nodeVersion: process.version, createdAt: new Date().toISOString() };
  const dir = writeExternalRun(cfg.runsDir, { manifest, checkpoints: records, alerts: monitor.alerts, summary });
  const result = readRun(dir);
  indexRun(cfg.runsDir, result);
  const report = cfg.report ? await writeReport(dir, { out: typeof cfg.report === "string" ? cfg.report : undefined }) : null;
  const doc = ingestDocument(result);
  return { result, report, doc: report ? { ...doc, report } : doc };
}
