/**
 * The scale of the external monitor (external.ts): users' checkpoints in their own units mapped to the
 * normalized scale (0 = random, 1 = as intended, or the causal relative scale without ranges), with the
 * pooled level and its standard error at each checkpoint, and the monitor's configuration. See the
 * module comment of external.ts for the method. Pure; no I/O.
 */
import { InputError } from "../errors.js";
import type { IngestCheckpoint } from "../ingest/checkpoints.js";
import { median } from "../stats/summary.js";

/** One external checkpoint in the user's units: src/ingest's checkpoint (step, means, optional std and episode count). */
export type ExternalCheckpoint = IngestCheckpoint;

/** What "random" (low) and "as good as intended" (high) score in the user's units. */
export interface ScoreRange {
  readonly low: number;
  readonly high: number;
}

export interface ExternalScaleOptions {
  readonly designerRange?: ScoreRange;
  readonly intentRange?: ScoreRange;
}

export interface ExternalMonitorConfig {
  /** Checkpoints pooled into one level. */
  pool: number;
  noise: {
    /** Pseudo-residuals needed before the series' own noise estimate is used. */
    minResiduals: number;
  };
  intentDrop: {
    /** Smallest fall of the intent level from its peak that can alert, normalized. */
    floor: number;
    /** One-sided z the fall must reach. */
    z: number;
    /** An active drop clears when its z falls below this (or the fall below floor/2). */
    zClear: number;
    /** Normalized fall of the designer level since the intent peak still counted as "not falling" (plus 2 se). */
    designerSlack: number;
  };
  proxySaturated: {
    designerMin: number;
    intentMax: number;
    /** One-sided z of the bounds compared. */
    z: number;
  };
  rankBreak: {
    enabled: boolean;
    /** Pooled levels needed before the correlation is read. */
    minPoints: number;
    /** Spearman rho at or below this breaks. */
    threshold: number;
    /** One-sided p (t approximation of Spearman's rho) at or below this. */
    p: number;
    /** The designer level must have risen this much (normalized) above its first level, and by 2 se. */
    minRise: number;
  };
  inconclusiveBelow: number;
}

export const EXTERNAL_DEFAULTS: ExternalMonitorConfig = {
  pool: 3,
  noise: { minResiduals: 4 },
  intentDrop: { floor: 0.15, z: 3.25, zClear: 1.5, designerSlack: 0.05 },
  proxySaturated: { designerMin: 0.9, intentMax: 0.7, z: 1.645 },
  rankBreak: { enabled: true, minPoints: 6, threshold: -0.3, p: 0.01, minRise: 0.1 },
  inconclusiveBelow: 0.5,
};

export type ExternalConfigInput = { [K in keyof ExternalMonitorConfig]?: ExternalMonitorConfig[K] extends object ? Partial<ExternalMonitorConfig[K]> : ExternalMonitorConfig[K] };

export function resolveExternalConfig(p: ExternalConfigInput = {}): ExternalMonitorConfig {
  const d = EXTERNAL_DEFAULTS;
  const cfg: ExternalMonitorConfig = {
    pool: p.pool ?? d.pool,
    noise: { ...d.noise, ...(p.noise ?? {}) },
    intentDrop: { ...d.intentDrop, ...(p.intentDrop ?? {}) },
    proxySaturated: { ...d.proxySaturated, ...(p.proxySaturated ?? {}) },
    rankBreak: { ...d.rankBreak, ...(p.rankBreak ?? {}) },
    inconclusiveBelow: p.inconclusiveBelow ?? d.inconclusiveBelow,
  };
  if (!Number.isInteger(cfg.pool) || cfg.pool < 1) throw new InputError("config.externalMonitor", `pool must be an integer >= 1, got ${cfg.pool}`, "monitor.pool");
  if (!Number.isInteger(cfg.noise.minResiduals) || cfg.noise.minResiduals < 1) {
    throw new InputError("config.externalMonitor", `noise.minResiduals must be an integer >= 1, got ${cfg.noise.minResiduals}`, "monitor.noise.minResiduals");
  }
  return cfg;
}

/** Parse "LOW:HIGH" (two finite numbers, LOW != HIGH); `where` names the option for the error line. */
export function parseRange(text: string, where: string): ScoreRange {
  const m = /^\s*([^:]+):([^:]+)\s*$/.exec(text);
  const low = m ? Number(m[1]) : NaN;
  const high = m ? Number(m[2]) : NaN;
  if (!m || m[1].trim() === "" || m[2].trim() === "" || !Number.isFinite(low) || !Number.isFinite(high)) {
    throw new InputError("input.range", `expected LOW:HIGH with two numbers (e.g. -20:180), got ${JSON.stringify(text)}`, where);
  }
  if (low === high) throw new InputError("input.range", `LOW and HIGH must differ (random and intended scores are both ${low})`, where);
  return { low, high };
}

export function checkRange(r: ScoreRange | undefined, where: string): void {
  if (r === undefined) return;
  if (!Number.isFinite(r.low) || !Number.isFinite(r.high) || r.low === r.high) {
    throw new InputError("input.range", `a range needs two different finite numbers, got ${r.low}:${r.high}`, where);
  }
}

const MAD_TO_SD = 1.4826;
/** Pseudo-residuals are winsorized at this many MAD-sigmas before their root mean square is taken. */
const WINSOR_AT = 3;
/** E[min(Z^2, 9)] for a standard normal Z: 1 - 2(3 phi(3) + 1 - Phi(3)) + 9 * 2(1 - Phi(3)) = 0.99495. */
const WINSOR_E2 = 0.99495;

/** Standard error of the mean from a logged spread, or NaN when the log does not allow it. */
function logSe(std: number | undefined, episodes: number | undefined): number {
  if (std === undefined || episodes === undefined || !(episodes >= 2) || !(std >= 0) || !Number.isFinite(std)) return NaN;
  return std / Math.sqrt(episodes);
}

/**
 * One score series on its way to the normalized scale, causally: values, standard errors, pooled
 * levels and (relative scale) the running best level.
 */
export class ExternalScale {
  readonly relative: boolean;
  private readonly low: number;
  private readonly span: number;
  private readonly values: number[] = [];
  private readonly steps: number[] = [];
  private readonly logSes: number[] = [];
  private readonly residuals: number[] = [];
  private bestLevel = -Infinity;

  constructor(
    range: ScoreRange | undefined,
    private readonly pool: number,
    private readonly minResiduals: number,
  ) {
    this.relative = range === undefined;
    this.low = range?.low ?? 0;
    this.span = range ? range.high - range.low : 1;
  }

  get length(): number {
    return this.values.length;
  }

  /** Add one checkpoint's raw mean (and spread). */
  push(step: number, raw: number, std?: number, episodes?: number): void {
    this.values.push((raw - this.low) / this.span);
    this.steps.push(step);
    this.logSes.push(logSe(std, episodes) / Math.abs(this.span));
    const n = this.values.length;
    if (n >= 3) {
      const [s0, s1, s2] = [this.steps[n - 3], this.steps[n - 2], this.steps[n - 1]];
      const a = s2 > s0 ? (s2 - s1) / (s2 - s0) : 0.5;
      const e = this.values[n - 2] - (a * this.values[n - 3] + (1 - a) * this.values[n - 1]);
      this.residuals.push(Math.abs(e) / Math.sqrt(1 + a * a + (1 - a) * (1 - a)));
    }
    if (n >= this.pool) this.bestLevel = Math.max(this.bestLevel, this.levelRaw(n - 1));
  }

  /** The series' own noise estimate (internal units), NaN until minResiduals pseudo-residuals exist. */
  seriesSigma(): number {
    if (this.residuals.length < this.minResiduals) return NaN;
    const cap = WINSOR_AT * MAD_TO_SD * median(this.residuals);
    let ss = 0;
    for (const e of this.residuals) ss += Math.min(e, cap) ** 2;
    return Math.sqrt(ss / this.residuals.length / WINSOR_E2);
  }

  /** Standard error of checkpoint i in internal units (see the module comment), NaN when unknown. */
  private se(i: number, sigma: number): number {
    const l = this.logSes[i];
    if (Number.isNaN(l)) return sigma;
    return Number.isNaN(sigma) ? l : Math.max(l, sigma);
  }

  private levelRaw(end: number): number {
    const from = Math.max(0, end - this.pool + 1);
    let s = 0;
    for (let i = from; i <= end; i++) s += this.values[i];
    return s / (end - from + 1);
  }

  /**
   * Pooled level ending at checkpoint `end` and its standard error, internal units; `df` is the number
   * of pseudo-residuals behind the series' own noise estimate when that estimate decided the se of
   * some checkpoint in the level, Infinity when the log's spread decided all of them.
   */
  level(end: number): { value: number; se: number; df: number } {
    const from = Math.max(0, end - this.pool + 1);
    const sigma = this.seriesSigma();
    let v = 0;
    let s = 0;
    let df = Infinity;
    for (let i = from; i <= end; i++) {
      v += this.values[i];
      const e = this.se(i, sigma);
      if (e === sigma) df = this.residuals.length;
      s += e * e;
    }
    const m = end - from + 1;
    return { value: v / m, se: Math.sqrt(s) / m, df };
  }

  /** Offset and unit of the normalized scale NOW: norm = (internal - offset)/unit; unit NaN when undefined. */
  frame(): { offset: number; unit: number } {
    if (!this.relative) return { offset: 0, unit: 1 };
    const first = this.values[0];
    const gain = this.bestLevel - first;
    return { offset: first, unit: gain > 0 ? gain : NaN };
  }

  /** Checkpoint i's value and standard error on the current normalized scale. */
  normalized(i: number): { value: number; se: number } {
    const { offset, unit } = this.frame();
    return { value: (this.values[i] - offset) / unit, se: this.se(i, this.seriesSigma()) / unit };
  }
}

/** A checkpoint on the normalized scale (each computed with what was known at that checkpoint). */
export interface NormalizedCheckpoint {
  step: number;
  designerNorm: number;
  intentNorm: number;
  /** Standard errors on the same scale; null when the noise is not known yet. */
  designerSe: number | null;
  intentSe: number | null;
  /** True when no range was given for at least one score (relative scale for it). */
  relative: boolean;
}

export const orNull = (x: number) => (Number.isFinite(x) ? x : null);

/**
 * Checkpoints to the normalized scale (module comment): with a range (x - low)/(high - low) and the
 * spread scaled likewise; without one the causal relative scale (0 = first checkpoint, 1 = best pooled
 * level so far). Checkpoint i uses checkpoints 0..i only, so a growing log gives a growing prefix.
 */
export function normalizeExternal(checkpoints: readonly ExternalCheckpoint[], opts: ExternalScaleOptions & { config?: ExternalConfigInput } = {}): NormalizedCheckpoint[] {
  checkRange(opts.designerRange, "--designer-range");
  checkRange(opts.intentRange, "--intent-range");
  const cfg = resolveExternalConfig(opts.config);
  const d = new ExternalScale(opts.designerRange, cfg.pool, cfg.noise.minResiduals);
  const n = new ExternalScale(opts.intentRange, cfg.pool, cfg.noise.minResiduals);
  return checkpoints.map((c, i) => {
    d.push(c.step, c.designer, c.designerStd, c.episodes);
    n.push(c.step, c.intent, c.intentStd, c.episodes);
    const dn = d.normalized(i);
    const nn = n.normalized(i);
    return { step: c.step, designerNorm: dn.value, intentNorm: nn.value, designerSe: orNull(dn.se), intentSe: orNull(nn.se), relative: d.relative || n.relative };
  });
}
