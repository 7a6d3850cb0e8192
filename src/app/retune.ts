/**
 * `gapwatch retune`: tune the movable weights of a reward on some layouts of an environment family,
 * then evaluate them on disjoint held-out layouts (method in src/tune/search.ts, document in
 * src/tune/run.ts). Loads the layouts, checks the inputs, writes the HTML report when asked.
 */
import { availableParallelism } from "node:os";
import { join, resolve } from "node:path";
import { InputError } from "../errors.js";
import { loadEnvSync, loadFinite, resolveReward, splitLayout, withLayout } from "../env/index.js";
import { isModuleSpec } from "../env/resolve.js";
import type { FiniteModel } from "../model/types.js";
import { renderRetuneReport } from "../report/retune-report.js";
import { writeReportFile } from "../report/write.js";
import { writeJsonAtomic } from "../store/atomic.js";
import { runRetune, type RetuneDoc } from "../tune/run.js";
import type { FeatureBounds } from "../tune/search.js";
import { holdoutRegretsParallel, PARALLEL_FROM } from "../tune/parallel.js";
import { ownValue } from "../util/own.js";
import { packageVersion } from "../util/paths.js";

export interface RetuneConfig {
  /** The family: a built-in scenario, a folder or comma list of model files, or a module with layouts. */
  env: string;
  /** The starting reward (a variant name or reward file); default: the family's default variant. */
  reward?: string;
  /** The features allowed to move, with bounds. */
  move: FeatureBounds[];
  tuning: number[];
  holdout: number[];
  /** Most coordinate rounds (across restarts). */
  budget: number;
  seed: number;
  maxStates?: number;
  /** Worker threads for the held-out evaluation when there are more than PARALLEL_FROM layouts (default: the machine's cores; 1 = this thread). */
  threads?: number;
  /** Write the HTML report: true for `<runsDir>/retune-<env>.html`, or a file. */
  report?: boolean | string;
  runsDir?: string;
}

/** Parse `--move step=-0.1:0,fragile=-2:2` (feature=lo:hi, comma separated). */
export function parseMoves(text: string, where = "--move"): FeatureBounds[] {
  const out: FeatureBounds[] = [];
  for (const part of text.split(",")) {
    const m = /^\s*([^=\s]+)\s*=\s*(-?[0-9.eE+-]+)\s*:\s*(-?[0-9.eE+-]+)\s*$/.exec(part);
    if (!m) throw new InputError("retune.move", `give each movable feature as name=lo:hi (e.g. fragile=-2:2), got ${JSON.stringify(part.slice(0, 60))}`, where);
    const lo = Number(m[2]);
    const hi = Number(m[3]);
    if (!Number.isFinite(lo) || !Number.isFinite(hi) || lo > hi) throw new InputError("retune.move", `bounds of ${JSON.stringify(m[1])} must be finite numbers with lo <= hi`, where);
    if (m[1] === "__proto__" || out.some((b) => b.feature === m[1])) throw new InputError("retune.move", `feature ${JSON.stringify(m[1])} is not allowed or listed twice`, where);
    out.push({ feature: m[1], lo, hi });
  }
  return out;
}

function layoutLoader(base: string, maxStates: number | undefined): (n: number) => FiniteModel {
  return (n: number) => loadEnvSync(withLayout(base, n), { maxStates }).model;
}

export async function runRetuneCommand(cfg: RetuneConfig): Promise<{ doc: RetuneDoc & { report?: string }; report: string | null; worstModel: FiniteModel | null; worstRoute: number[] }> {
  const base = splitLayout(cfg.env).base;
  if (cfg.tuning.length === 0) throw new InputError("retune.layouts", "give at least one tuning layout", "--tune-on");
  if (cfg.holdout.length === 0) throw new InputError("retune.layouts", "give at least one held-out layout", "--hold-out");
  const overlap = cfg.holdout.filter((n) => cfg.tuning.includes(n));
  if (overlap.length) throw new InputError("retune.layouts", `tuning and held-out layouts must be disjoint; both name ${overlap.slice(0, 5).join(", ")}`, "--hold-out");
  if (cfg.move.length === 0) throw new InputError("retune.move", "name at least one feature allowed to move", "--move");
  // Modules load asynchronously: load each layout once up front.
  let load = layoutLoader(base, cfg.maxStates);
  if (isModuleSpec(base)) {
    const cache = new Map<number, FiniteModel>();
    for (const n of [...cfg.tuning, ...cfg.holdout]) cache.set(n, (await loadFinite(withLayout(base, n), { command: "retune", maxStates: cfg.maxStates })).model);
    load = (n) => cache.get(n) as FiniteModel;
  }
  const first = load(cfg.tuning[0]);
  const variant = resolveReward(first, cfg.reward);
  for (const b of cfg.move) {
    if (!first.features.includes(b.feature)) throw new InputError("retune.move", `unknown feature ${JSON.stringify(b.feature)}; the family has features: ${first.features.join(", ")}`, "--move");
  }
  const start: Record<string, number> = Object.create(null) as Record<string, number>;
  for (const f of first.features) start[f] = ownValue(variant.weights, f) ?? 0;
  const tuning = cfg.tuning.map((n) => ({ layout: n, model: load(n) }));
  const threads = cfg.threads ?? availableParallelism();
  const pooled = cfg.holdout.length > PARALLEL_FROM && threads > 1;
  const { doc, worstModel, worstRoute } = await runRetune({
    env: base,
    reward: variant.name,
    start,
    bounds: cfg.move,
    tuning,
    holdout: cfg.holdout,
    loadLayout: load,
    budget: cfg.budget,
    seed: cfg.seed,
    ...(pooled ? { holdoutRegrets: (w: Record<string, number>) => holdoutRegretsParallel(base, cfg.holdout, w, { threads, maxStates: cfg.maxStates }) } : {}),
  });
  let report: string | null = null;
  if (cfg.report) {
    const slug = base.replace(/[^A-Za-z0-9._-]+/g, "_").slice(-60);
    const out = typeof cfg.report === "string" ? resolve(cfg.report) : join(resolve(cfg.runsDir ?? "runs"), `retune-${slug}.html`);
    report = writeReportFile(out, await renderRetuneReport({ doc, worstModel, worstRoute, version: packageVersion() }));
    writeJsonAtomic(report.replace(/\.html?$/i, "") + ".json", doc);
  }
  return { doc: report ? { ...doc, report } : doc, report, worstModel, worstRoute };
}
