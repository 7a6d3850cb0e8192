/**
 * Conformance output of the shared benchmark (PROBLEM.md section 7): checksums, greedy rollouts and
 * the CHECK / TIME lines, byte-identical to the peer programs'. Pure.
 */
import { KIND_GOAL, KIND_LAVA, type LavaProblem } from "./lava.js";

/** The 64-bit IEEE pattern of x, 16 lowercase hex digits, most significant first. */
export function hexBits(x: number): string {
  const view = new DataView(new ArrayBuffer(8));
  view.setFloat64(0, x);
  return view.getBigUint64(0).toString(16).padStart(16, "0");
}

/** Left-to-right binary64 sum from 0.0 (no pairwise / Kahan), as the checksums require. */
export function leftSum(xs: Float64Array): number {
  let acc = 0;
  for (let i = 0; i < xs.length; i++) acc += xs[i];
  return acc;
}

export type RolloutEnd = "goal" | "hazard" | "cap";

export interface Rollout {
  len: number;
  end: RolloutEnd;
}

/**
 * Follow a greedy action per state from the start until a terminal cell is entered or `cap` moves
 * were made (PROBLEM.md section 5, "Greedy rollout").
 */
export function greedyRollout(p: LavaProblem, actionOf: (s: number) => number): Rollout {
  const { model, kind } = p;
  let s = p.start;
  let len = 0;
  while (len < p.cap) {
    const a = actionOf(s);
    s = model.next[model.saStart[s * model.nActions + a]];
    len++;
    if (kind[s] === KIND_GOAL) return { len, end: "goal" };
    if (kind[s] === KIND_LAVA) return { len, end: "hazard" };
  }
  return { len, end: "cap" };
}

/** argmax over row s of a nStates x nActions table, scanning upwards, replacing only on strictly greater. */
export function argmaxRow(table: Float64Array, s: number, nA: number): number {
  const b = s * nA;
  let a = 0;
  let m = table[b];
  for (let c = 1; c < nA; c++) {
    if (table[b + c] > m) {
      m = table[b + c];
      a = c;
    }
  }
  return a;
}

export interface ViResult {
  W: number;
  H: number;
  iters: number;
  values: Float64Array;
  rollout: Rollout;
}

export function viCheckLine(r: ViResult): string {
  const vsum = leftSum(r.values);
  return (
    `CHECK vi W=${r.W} H=${r.H} iters=${r.iters} vsum=${vsum.toFixed(12)} vbits=${hexBits(vsum)} ` +
    `vstart=${r.values[0].toFixed(12)} greedy_len=${r.rollout.len} greedy_end=${r.rollout.end}`
  );
}

/**
 * Agreement of a CHECK vi line whose values are not bit-identical to the reference's (the engine row):
 * same W, H and greedy rollout, vstart within `tol` and vsum within `tol` per state. The iteration
 * count and value bits are not compared.
 */
export function viCheckClose(check: string, reference: string, tol = 1e-8): boolean {
  const field = (line: string, k: string): string | undefined => new RegExp(`(?:^| )${k}=(\\S+)`).exec(line)?.[1];
  for (const k of ["W", "H", "greedy_len", "greedy_end"]) if (field(check, k) === undefined || field(check, k) !== field(reference, k)) return false;
  const S = Number(field(check, "W")) * Number(field(check, "H"));
  const d = (k: string) => Math.abs(Number(field(check, k)) - Number(field(reference, k)));
  return d("vstart") <= tol && d("vsum") <= tol * S;
}

export interface QlResult {
  W: number;
  H: number;
  steps: number;
  seed: number;
  episodes: number;
  goals: number;
  hazards: number;
  timeouts: number;
  q: Float64Array;
  rollout: Rollout;
}

export function qlCheckLine(r: QlResult): string {
  const qsum = leftSum(r.q);
  return (
    `CHECK ql W=${r.W} H=${r.H} steps=${r.steps} seed=${r.seed} episodes=${r.episodes} goals=${r.goals} ` +
    `hazards=${r.hazards} timeouts=${r.timeouts} qsum=${qsum.toFixed(12)} qbits=${hexBits(qsum)} ` +
    `greedy_len=${r.rollout.len} greedy_end=${r.rollout.end}`
  );
}

export function viTimeLine(impl: string, iters: number, S: number, seconds: number): string {
  return `TIME vi impl=${impl} solve_s=${seconds.toFixed(6)} sweeps_per_s=${(iters / seconds).toFixed(1)} cell_updates_per_s=${((iters * S) / seconds).toFixed(0)}`;
}

export function qlTimeLine(impl: string, steps: number, seconds: number): string {
  return `TIME ql impl=${impl} train_s=${seconds.toFixed(6)} steps_per_s=${(steps / seconds).toFixed(0)}`;
}
