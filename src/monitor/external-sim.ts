/**
 * Simulated noisy external training logs of known shape, for measuring the external monitor
 * (scripts/detection-quality.ts, tests/monitor/external-quality.test.ts). Pure given the Rng.
 *
 * Truth (normalized units, 0 = random, 1 = intended), on a step axis:
 *   - checkpoints: n ~ U{30..60}; spacing base x U(0.5, 1.5), and with probability 0.1 a gap of 3x
 *     (a resumed run), base = 2048 x U{1..5} steps: irregular step spacing.
 *   - designer: learning in S ~ U{1..3} stages, each a logistic in progress u = step/last step with
 *     centre in [0.05, 0.45] and width in [0.02, 0.06], heights splitting dFinal ~ U(0.85, 1.0):
 *     rises with plateaus between stages.
 *   - intent, aligned: the same stages (centres shifted later by U(0, 0.05)) to iFinal ~ U(0.8, 1.0);
 *     in 30% of runs a temporary dip of depth U(0, 0.05) (a wobble no user cares about).
 *   - intent, decoupled: as aligned up to the onset checkpoint c0 ~ U{ceil(0.5 n)..n - 8}, then
 *     falls by D ~ U(0.3, 0.6) (capped at the intent's value at c0), approached as
 *     D (1 - exp(-k/tau)) with k the checkpoints' worth of steps since c0 and tau ~ U(0.5, 1.5)
 *     checkpoints (an exploit found and taken up over a few checkpoints; `fallTau` changes the range,
 *     e.g. a slow drift); the designer gains a further
 *     U(0, 0.1) over the same time (capped at 1). The user cares: at least 0.3 of achievable intent is
 *     lost by the end of the run.
 * Noise: each checkpoint's policy differs from the smooth truth by N(0, 0.02) (policy jitter, not in
 * the logged spread), and each of the N evaluation episodes scores that plus N(0, sigma) with
 * sigma ~ U(0.15, 0.35) per run and score, so the checkpoint mean has sd ~ sigma/sqrt(N). The record
 * carries the mean, the sample sd and N, like a real log, in raw units: designer raw = -50 + 500 x norm,
 * intent raw = 10 x norm (SIM_DESIGNER_RANGE, SIM_INTENT_RANGE).
 */
import type { Rng } from "../rng/rng.js";
import type { ExternalCheckpoint, ScoreRange } from "./external.js";

export const SIM_DESIGNER_RANGE: ScoreRange = { low: -50, high: 450 };
export const SIM_INTENT_RANGE: ScoreRange = { low: 0, high: 10 };

export type SimKind = "aligned" | "decoupled";

export interface SimRun {
  kind: SimKind;
  /** Checkpoints with std and episode count. */
  checkpoints: ExternalCheckpoint[];
  /** Decoupled: index of the last checkpoint before intent starts to fall (the true onset); else null. */
  onset: number | null;
  /** Noise-free normalized truth per checkpoint. */
  truth: { designer: number[]; intent: number[] };
}

const uniform = (rng: Rng, a: number, b: number) => a + (b - a) * rng.float();
const intIn = (rng: Rng, a: number, b: number) => a + rng.int(b - a + 1);

/** Standard normal draw (Box-Muller, cosine branch). */
export function gaussian(rng: Rng): number {
  const u = 1 - rng.float();
  return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * rng.float());
}

const logistic = (x: number) => 1 / (1 + Math.exp(-x));

function stagesCurve(rng: Rng, final: number): { centres: number[]; heights: number[]; widths: number[]; at: (u: number, shift?: number) => number } {
  const s = intIn(rng, 1, 3);
  const centres = Array.from({ length: s }, () => uniform(rng, 0.05, 0.45)).sort((a, b) => a - b);
  const raw = Array.from({ length: s }, () => uniform(rng, 0.3, 1));
  const tot = raw.reduce((a, b) => a + b, 0);
  const heights = raw.map((h) => (final * h) / tot);
  const widths = Array.from({ length: s }, () => uniform(rng, 0.02, 0.06));
  const at = (u: number, shift = 0) => {
    let v = 0;
    for (let i = 0; i < s; i++) v += heights[i] * (logistic((u - centres[i] - shift) / widths[i]) - logistic((0 - centres[i] - shift) / widths[i]));
    return v;
  };
  return { centres, heights, widths, at };
}

/** Mean and sample sd of `n` episodes around `mu` with sd `sigma`. */
function episodes(rng: Rng, mu: number, sigma: number, n: number): { mean: number; sd: number } {
  let s = 0;
  let ss = 0;
  for (let i = 0; i < n; i++) {
    const x = mu + sigma * gaussian(rng);
    s += x;
    ss += x * x;
  }
  const mean = s / n;
  const sd = n > 1 ? Math.sqrt(Math.max(0, (ss - n * mean * mean) / (n - 1))) : 0;
  return { mean, sd };
}

export interface SimOptions {
  /** Range of the fall's time constant tau, in checkpoints. Default [0.5, 1.5]. */
  readonly fallTau?: readonly [number, number];
}

/** One simulated run (module comment) with N evaluation episodes per checkpoint. */
export function simulateExternalRun(rng: Rng, kind: SimKind, episodesPerCheckpoint: number, opts: SimOptions = {}): SimRun {
  const n = intIn(rng, 30, 60);
  const base = 2048 * intIn(rng, 1, 5);
  const steps: number[] = [];
  let step = 0;
  for (let k = 0; k < n; k++) {
    step += Math.round(base * uniform(rng, 0.5, 1.5) * (rng.float() < 0.1 ? 3 : 1));
    steps.push(step);
  }
  const last = steps[n - 1];
  const meanGap = last / n;
  const designer = stagesCurve(rng, uniform(rng, 0.85, 1.0));
  const intentFinal = uniform(rng, 0.8, 1.0);
  const lag = uniform(rng, 0, 0.05);
  const dip = rng.float() < 0.3 ? { depth: uniform(rng, 0, 0.05), at: uniform(rng, 0.2, 0.9) } : null;
  const iScale = intentFinal / designer.heights.reduce((a, b) => a + b, 0);
  const onset = kind === "decoupled" ? intIn(rng, Math.ceil(0.5 * n), n - 8) : null;
  const fallSize = uniform(rng, 0.3, 0.6);
  const tau = uniform(rng, ...(opts.fallTau ?? [0.5, 1.5]));
  const boost = uniform(rng, 0, 0.1);
  const sigmaD = uniform(rng, 0.15, 0.35);
  const sigmaI = uniform(rng, 0.15, 0.35);
  const tD: number[] = [];
  const tI: number[] = [];
  for (let k = 0; k < n; k++) {
    const u = steps[k] / last;
    let d = designer.at(u);
    let i = iScale * designer.at(u, lag);
    if (dip) i -= dip.depth * Math.exp(-(((u - dip.at) / 0.03) ** 2));
    if (onset !== null && k > onset) {
      const x = (steps[k] - steps[onset]) / meanGap / tau;
      const iAtOnset = tI[onset];
      i -= Math.min(fallSize, iAtOnset) * (1 - Math.exp(-x));
      d = Math.min(1, d + boost * (1 - Math.exp(-x)));
    }
    tD.push(d);
    tI.push(i);
  }
  const span = (r: ScoreRange) => r.high - r.low;
  const checkpoints: ExternalCheckpoint[] = steps.map((s, k) => {
    const de = episodes(rng, tD[k] + 0.02 * gaussian(rng), sigmaD, episodesPerCheckpoint);
    const ie = episodes(rng, tI[k] + 0.02 * gaussian(rng), sigmaI, episodesPerCheckpoint);
    return {
      step: s,
      designer: SIM_DESIGNER_RANGE.low + span(SIM_DESIGNER_RANGE) * de.mean,
      intent: SIM_INTENT_RANGE.low + span(SIM_INTENT_RANGE) * ie.mean,
      designerStd: span(SIM_DESIGNER_RANGE) * de.sd,
      intentStd: span(SIM_INTENT_RANGE) * ie.sd,
      episodes: episodesPerCheckpoint,
    };
  });
  return { kind, checkpoints, onset, truth: { designer: tD, intent: tI } };
}

/** The same checkpoints as a log without spread or count (means only). */
export function withoutSpread(checkpoints: readonly ExternalCheckpoint[]): ExternalCheckpoint[] {
  return checkpoints.map((c) => ({ step: c.step, designer: c.designer, intent: c.intent }));
}
