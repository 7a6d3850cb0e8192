/**
 * The test matrices of rliable's tests/rliable/metrics_test.py (REFERENCE_VALUES.md section 7):
 * X is 4 runs x 2 tasks, Y is 3 runs x 2 tasks. What the reference says of them: median = mean =
 * IQM = 1.5 for X and 2 for Y; P(X > Y) = 1/3, with U = 4 of 12 pairs per task.
 */
import { scoreMatrix } from "../../src/stats/summary.js";

export function rliableMatrices() {
  const X = scoreMatrix([
    [1, 2],
    [2, 2],
    [1, 1],
    [2, 1],
  ]);
  const Y = scoreMatrix([
    [1, 1],
    [2, 2],
    [3, 3],
  ]);
  return { X, Y };
}
