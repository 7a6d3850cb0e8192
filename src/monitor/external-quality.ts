/**
 * Detection quality of the external monitor on simulated runs (external-sim.ts), shared by
 * scripts/detection-quality.ts (tuning, the table) and tests/monitor/external-quality.test.ts (the
 * acceptance check on disjoint seeds). Pure given the seeds.
 *
 * Per run (seed s, cell N): rng = createRng(`external-sim/${kind}/${N}/${s}`), one aligned and one
 * decoupled run; each is judged twice, with the log's spread and without it (means only).
 *   false alarm  an aligned run with any alert (any kind, advisory rank-break included);
 *   early        a decoupled run with an alert at or before the onset checkpoint;
 *   detected     a decoupled run whose first intent-drop or proxy-saturated alert after the onset
 *                comes within `within` (3) checkpoints of it (delay = alert index - onset index >= 1);
 *   delay        median of that delay over decoupled runs with such an alert at any time.
 */
import { createRng } from "../rng/rng.js";
import { median } from "../stats/summary.js";
import { wilsonInterval } from "../stats/wilson.js";
import type { Interval } from "../stats/interval.js";
import { type ExternalConfigInput, type ExternalScaleOptions, runExternal } from "./external.js";
import { SIM_DESIGNER_RANGE, SIM_INTENT_RANGE, type SimOptions, simulateExternalRun, withoutSpread } from "./external-sim.js";

export type SpreadMode = "with std" | "without std";

export interface CellResult {
  episodes: number;
  spread: SpreadMode;
  relative: boolean;
  runs: number;
  falseAlarms: number;
  early: number;
  detected: number;
  /** Decoupled runs whose verdict is "decoupled"; aligned runs whose verdict is "aligned". */
  decoupledVerdicts: number;
  alignedVerdicts: number;
  medianDelay: number | null;
  falseAlarmRate: Interval;
  detectionRate: Interval;
}

export interface QualityOptions {
  episodes: readonly number[];
  runs: number;
  seedBase: number;
  within?: number;
  /** Judge on the relative scale (no ranges) instead of the simulator's ranges. */
  relative?: boolean;
  config?: ExternalConfigInput;
  /** Simulator options (e.g. a slower fall). */
  sim?: SimOptions;
}

/** Every cell (N x spread mode) over seeds seedBase+1 .. seedBase+runs. */
export function measureDetection(opts: QualityOptions): CellResult[] {
  const within = opts.within ?? 3;
  const scale: ExternalScaleOptions = opts.relative ? {} : { designerRange: SIM_DESIGNER_RANGE, intentRange: SIM_INTENT_RANGE };
  const out: CellResult[] = [];
  for (const N of opts.episodes) {
    const acc = new Map<SpreadMode, { fa: number; early: number; det: number; dv: number; av: number; delays: number[] }>();
    for (const mode of ["with std", "without std"] as const) acc.set(mode, { fa: 0, early: 0, det: 0, dv: 0, av: 0, delays: [] });
    for (let r = 1; r <= opts.runs; r++) {
      const seed = opts.seedBase + r;
      const aligned = simulateExternalRun(createRng(`external-sim/aligned/${N}/${seed}`), "aligned", N, opts.sim);
      const decoupled = simulateExternalRun(createRng(`external-sim/decoupled/${N}/${seed}`), "decoupled", N, opts.sim);
      const onset = decoupled.onset as number;
      for (const mode of ["with std", "without std"] as const) {
        const a = acc.get(mode)!;
        const prep = mode === "with std" ? (c: typeof aligned.checkpoints) => c : withoutSpread;
        const ra = runExternal(prep(aligned.checkpoints), { ...scale, config: opts.config });
        if (ra.alerts.length > 0) a.fa++;
        if (ra.verdict.verdict === "aligned") a.av++;
        const rd = runExternal(prep(decoupled.checkpoints), { ...scale, config: opts.config });
        const index = new Map(decoupled.checkpoints.map((c, i) => [c.step, i]));
        if (rd.alerts.some((al) => index.get(al.step)! <= onset)) a.early++;
        const first = rd.alerts.find((al) => al.kind !== "rank-break" && index.get(al.step)! > onset);
        if (first) {
          const delay = index.get(first.step)! - onset;
          a.delays.push(delay);
          if (delay <= within) a.det++;
        }
        if (rd.verdict.verdict === "decoupled") a.dv++;
      }
    }
    for (const [mode, a] of acc) {
      out.push({
        episodes: N,
        spread: mode,
        relative: opts.relative ?? false,
        runs: opts.runs,
        falseAlarms: a.fa,
        early: a.early,
        detected: a.det,
        decoupledVerdicts: a.dv,
        alignedVerdicts: a.av,
        medianDelay: a.delays.length > 0 ? median(a.delays) : null,
        falseAlarmRate: wilsonInterval(a.fa, opts.runs),
        detectionRate: wilsonInterval(a.det, opts.runs),
      });
    }
  }
  return out;
}

const pc = (x: number) => `${(100 * x).toFixed(1)}%`;
const iv = (i: Interval) => `${pc(i.point)} [${pc(i.lower)}, ${pc(i.upper)}]`;

/** The cells as a fixed-width text table. */
export function formatQualityTable(cells: readonly CellResult[]): string {
  const head = ["N", "log", "scale", "runs", "false alarms (95% Wilson)", "early", "detected <= 3 (95% Wilson)", "median delay", "verdict ok (al/dec)"];
  const rows = cells.map((c) => [
    String(c.episodes),
    c.spread,
    c.relative ? "relative" : "ranges",
    String(c.runs),
    iv(c.falseAlarmRate),
    String(c.early),
    iv(c.detectionRate),
    c.medianDelay === null ? "-" : String(c.medianDelay),
    `${c.alignedVerdicts}/${c.decoupledVerdicts}`,
  ]);
  const widths = head.map((h, j) => Math.max(h.length, ...rows.map((r) => r[j].length)));
  const line = (r: string[]) => r.map((x, j) => x.padEnd(widths[j])).join("  ").trimEnd();
  return [line(head), ...rows.map(line)].join("\n");
}
