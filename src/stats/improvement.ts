/**
 * Probability of improvement P(X > Y), as defined in Agarwal, Schwarzer, Castro, Courville and Bellemare 2021, "Deep Reinforcement Learning at the Edge of the Statistical Precipice", NeurIPS:
 * per task m, P(X_m > Y_m) = U / (N_x * N_y), U the Mann-Whitney U statistic of X's runs over Y's
 * runs, i.e. the average over all run pairs of S(x, y) = 1 if x > y, 1/2 if x = y, 0 if x < y;
 * then the unweighted mean over tasks. Identical columns give 0.5 per task.
 *
 * Data shape: two runs x tasks matrices with the same number of tasks (run counts may differ).
 * The CI resamples each algorithm's runs independently within each task (stratified independent
 * bootstrap, see bootstrap.ts).
 */
import { InputError } from "../errors.js";
import type { Rng } from "../rng/rng.js";
import { independentBootstrapCI, type BootstrapOptions } from "./bootstrap.js";
import type { Interval } from "./interval.js";
import type { Sample, ScoreMatrix } from "./summary.js";

/** Mann-Whitney U of x over y (ties count 1/2), from two ascending-sorted samples. O(nx + ny). */
export function mannWhitneyUSorted(xs: Sample, ys: Sample): number {
  let u = 0;
  let below = 0; // number of y strictly below the current x
  let equalEnd = 0; // index past the last y <= current x
  for (let i = 0; i < xs.length; i++) {
    const x = xs[i];
    while (below < ys.length && ys[below] < x) below++;
    if (equalEnd < below) equalEnd = below;
    while (equalEnd < ys.length && ys[equalEnd] === x) equalEnd++;
    u += below + 0.5 * (equalEnd - below);
  }
  return u;
}

/** Mann-Whitney U of x over y (ties count 1/2). */
export function mannWhitneyU(xs: Sample, ys: Sample): number {
  const sx = Float64Array.from(xs as ArrayLike<number>).sort();
  const sy = Float64Array.from(ys as ArrayLike<number>).sort();
  return mannWhitneyUSorted(sx, sy);
}

/** P(X > Y) for one task: U / (nx * ny). */
export function probabilityOfImprovementTask(xs: Sample, ys: Sample): number {
  if (xs.length === 0 || ys.length === 0) {
    throw new InputError("stats.empty", "probability of improvement needs at least one run on each side", "improvement");
  }
  return mannWhitneyU(xs, ys) / (xs.length * ys.length);
}

/** Reusable column buffers so the bootstrap does not allocate per replicate. */
class ColumnScratch {
  private cx = new Float64Array(0);
  private cy = new Float64Array(0);
  compute(x: ScoreMatrix, y: ScoreMatrix): number {
    if (this.cx.length !== x.runs) this.cx = new Float64Array(x.runs);
    if (this.cy.length !== y.runs) this.cy = new Float64Array(y.runs);
    const cx = this.cx;
    const cy = this.cy;
    let acc = 0;
    for (let t = 0; t < x.tasks; t++) {
      for (let r = 0; r < x.runs; r++) cx[r] = x.values[r * x.tasks + t];
      for (let r = 0; r < y.runs; r++) cy[r] = y.values[r * y.tasks + t];
      cx.sort();
      cy.sort();
      acc += mannWhitneyUSorted(cx, cy) / (x.runs * y.runs);
    }
    return acc / x.tasks;
  }
}

function checkPair(x: ScoreMatrix, y: ScoreMatrix): void {
  if (x.tasks !== y.tasks) {
    throw new InputError(
      "stats.shape",
      `probability of improvement compares task by task; x has ${x.tasks} tasks, y has ${y.tasks}`,
      "y",
    );
  }
  if (x.runs < 1 || y.runs < 1 || x.tasks < 1) {
    throw new InputError("stats.empty", "probability of improvement needs at least one run and one task", "improvement");
  }
}

/** P(X > Y): mean over tasks of per-task U / (nx * ny). */
export function probabilityOfImprovement(x: ScoreMatrix, y: ScoreMatrix): number {
  checkPair(x, y);
  return new ColumnScratch().compute(x, y);
}

/** P(X > Y) with a stratified independent bootstrap interval (explicit rng). */
export function probabilityOfImprovementCI(
  x: ScoreMatrix,
  y: ScoreMatrix,
  rng: Rng,
  opts?: BootstrapOptions,
): Interval {
  checkPair(x, y);
  const scratch = new ColumnScratch();
  return independentBootstrapCI(x, y, (a, b) => scratch.compute(a, b), rng, opts);
}
