/**
 * gapwatch's own JSON-lines schema and the pooling of episodes into checkpoints.
 *
 * Our schema has two kinds of line, told apart by their keys:
 *   checkpoint lines `{step, designer, intent, designerStd?, intentStd?, episodes?}`: a file is read
 *     as checkpoints as soon as one line carries `episodes`, `designerStd` or `intentStd`; each line is
 *     then one checkpoint as written;
 *   episode lines `{step, designer, intent}` (what python/gapwatch_bridge.py writes: step = cumulative
 *     environment steps when the episode ended, designer = episode return, intent = episode intent):
 *     pooled into checkpoints over step windows exactly as monitor-CSV episodes (windows.ts): checkpoint
 *     k pools the episodes ending in (kW, (k+1)W], reports their mean, sample sd and count.
 * The window W is the caller's; `defaultWindow` gives ten typical episodes' worth of steps, on a
 * round number, decided from the first episodes so a live run keeps the same window.
 */
import { InputError } from "../errors.js";
import type { Series } from "./series.js";
import type { TableSeries } from "./table.js";
import { rollingMean, type StepValue, windowCheckpoints } from "./windows.js";

/** One checkpoint for the monitor: both scores at one step, with their spread when known. */
export interface IngestCheckpoint {
  readonly step: number;
  readonly designer: number;
  readonly intent: number;
  readonly designerStd?: number;
  readonly intentStd?: number;
  /** Episodes behind this checkpoint, when known. */
  readonly episodes?: number;
}

export type OwnLineKind = "checkpoints" | "episodes";

/** Which kind of our schema a table holds (see the module comment). */
export function ownLineKind(table: TableSeries): OwnLineKind {
  return table.series.has("episodes") || table.series.has("designerStd") || table.series.has("intentStd") ? "checkpoints" : "episodes";
}

/** Episodes that a default window pools, roughly. */
export const EPISODES_PER_DEFAULT_WINDOW = 10;

/** Smallest 1, 2 or 5 x 10^k >= x (x > 0). */
export function niceCeil(x: number): number {
  const p = 10 ** Math.floor(Math.log10(x));
  for (const m of [1, 2, 5, 10]) if (m * p >= x) return m * p;
  return 10 * p;
}

/**
 * A window of about EPISODES_PER_DEFAULT_WINDOW episodes: 10 x the median length of the first (up to)
 * 10 episodes, rounded up to 1, 2 or 5 x 10^k steps. `steps` are cumulative end steps in episode order.
 * Undefined before the first episode.
 */
export function defaultWindow(steps: readonly number[]): number | undefined {
  if (steps.length === 0) return undefined;
  const lengths = steps.slice(0, 10).map((s, i) => s - (i === 0 ? 0 : steps[i - 1]));
  lengths.sort((a, b) => a - b);
  const m = lengths.length;
  const median = m % 2 === 1 ? lengths[(m - 1) / 2] : (lengths[m / 2 - 1] + lengths[m / 2]) / 2;
  return niceCeil(Math.max(1, EPISODES_PER_DEFAULT_WINDOW * median));
}

function zip(s: Series): StepValue[] {
  return s.steps.map((step, i) => ({ step, value: s.values[i] }));
}

/**
 * Checkpoints from a designer and an intent series of per-episode values on the same step axis
 * (same length, same steps: one entry per episode), pooled over windows of `window` steps.
 */
export function poolEpisodes(designer: Series, intent: Series, window: number, where: string): IngestCheckpoint[] {
  if (designer.steps.length !== intent.steps.length || designer.steps.some((s, i) => s !== intent.steps[i])) {
    throw new InputError("ingest.series", `the designer series ${JSON.stringify(designer.name)} and the intent series ${JSON.stringify(intent.name)} are not on the same episodes (${designer.steps.length} vs ${intent.steps.length} values); every episode line needs both`, where);
  }
  const d = windowCheckpoints(zip(designer), window);
  const n = windowCheckpoints(zip(intent), window);
  return d.map((c, k) => ({
    step: c.step,
    designer: c.mean,
    intent: n[k].mean,
    ...(c.sd !== null ? { designerStd: c.sd } : {}),
    ...(n[k].sd !== null ? { intentStd: n[k].sd! } : {}),
    episodes: c.count,
  }));
}

/**
 * Our schema to checkpoints: checkpoint lines as written; episode lines pooled over `window` (default
 * `defaultWindow`). `names` lets the designer and intent keys be renamed (default "designer", "intent").
 */
export function ownCheckpoints(table: TableSeries, where: string, opts: { window?: number; designer?: Series; intent?: Series } = {}): IngestCheckpoint[] {
  const designer = opts.designer ?? table.series.get("designer");
  const intent = opts.intent ?? table.series.get("intent");
  if (designer === undefined || intent === undefined) {
    throw new InputError("ingest.series", `our JSON-lines schema needs numeric "designer" and "intent" on every line; found: ${[...table.series.keys()].join(", ") || "none"}`, where);
  }
  if (ownLineKind(table) === "episodes") {
    const w = opts.window ?? defaultWindow(designer.steps);
    return w === undefined ? [] : poolEpisodes(designer, intent, w, where);
  }
  const at = (name: string): Map<number, number> => {
    const s = table.series.get(name);
    return new Map(s === undefined ? [] : s.steps.map((st, i) => [st, s.values[i]]));
  };
  const dStd = at("designerStd");
  const iStd = at("intentStd");
  const eps = at("episodes");
  const intentAt = new Map(intent.steps.map((st, i) => [st, intent.values[i]]));
  return designer.steps.map((step, i) => {
    const iv = intentAt.get(step);
    if (iv === undefined) throw new InputError("ingest.series", `checkpoint at step ${step} has a designer score but no intent score`, where);
    return {
      step,
      designer: designer.values[i],
      intent: iv,
      ...(dStd.has(step) ? { designerStd: dStd.get(step)! } : {}),
      ...(iStd.has(step) ? { intentStd: iStd.get(step)! } : {}),
      ...(eps.has(step) ? { episodes: eps.get(step)! } : {}),
    };
  });
}

/**
 * Checkpoints from a designer and an intent series logged at checkpoints (e.g. two event-file tags):
 * joined on equal steps (a step logged twice keeps its last value), in step order. Steps where only one
 * of the two was logged are left out; no common step at all is an InputError.
 */
export function alignSeries(designer: Series, intent: Series, where: string): IngestCheckpoint[] {
  const last = (s: Series): Map<number, number> => new Map(s.steps.map((st, i) => [st, s.values[i]]));
  const d = last(designer);
  const n = last(intent);
  const steps = [...d.keys()].filter((s) => n.has(s)).sort((a, b) => a - b);
  if (steps.length === 0 && designer.steps.length > 0 && intent.steps.length > 0) {
    throw new InputError("ingest.series", `the designer series ${JSON.stringify(designer.name)} and the intent series ${JSON.stringify(intent.name)} share no step (designer from ${designer.steps[0]}, intent from ${intent.steps[0]}); log both at the same steps`, where);
  }
  return steps.map((step) => ({ step, designer: d.get(step)!, intent: n.get(step)! }));
}

/**
 * Checkpoints at the same window ends as `poolEpisodes`, each the mean of the last (up to) `n` episodes
 * ended by then (windows.ts `rollingMean`): what trainers log as "mean return of the last n episodes",
 * so an episode log can be compared point for point with such a logged curve. No spread is given (the
 * rolling windows overlap); `episodes` is the number of episodes averaged.
 */
export function rollingCheckpoints(designer: Series, intent: Series, window: number, n: number, where: string): IngestCheckpoint[] {
  const pooled = poolEpisodes(designer, intent, window, where);
  const d = zip(designer);
  const i = zip(intent);
  return pooled.map((c) => {
    const ended = d.filter((p) => p.step <= c.step).length;
    return { step: c.step, designer: rollingMean(d, c.step, n)!, intent: rollingMean(i, c.step, n)!, episodes: Math.min(n, ended) };
  });
}
