/**
 * Candidate benchmark entry (not yet listed in main.ts): textbook value iteration (dp.ts
 * `valueSweeps`, synchronous sweeps to tol 1e-10, tables built before the clock) against the
 * component-wise engine (src/solve/engine), side by side in one process on the lava field of lava.ts.
 *
 * Timed regions:
 *  - textbook: the sweeps only (as runLavaVi in lava-run.ts).
 *  - engine: `planValueIteration` (graph, components, order; reward-independent, reusable for every
 *    reward of the model) and `solveValuesEngine` (the solve), each timed, reported apart and summed.
 * The engine is asked for accuracy 1e-10 (a proven max-norm bound); the textbook stop (change < 1e-10)
 * leaves it within gamma / (1 - gamma) * 1e-10 ~ 1e-8 of v*. Both are compared in the max norm.
 *
 * Measured once (2026-12-02, one process, 2 cores shared with other jobs, load average ~12):
 *   512 x 512:   textbook 8.29 s (1023 sweeps, 268M backups); engine 1.07 s (plan 0.80 + solve 0.27;
 *                1.31M backups, 1 component of 261633 states); x7.8; max |difference| 0.
 *   1024 x 1024: textbook 63.6 s (2047 sweeps, 2.14G backups); engine 2.94 s (plan 1.87 + solve 1.07;
 *                5.24M backups, 1 component of 1047553 states); x21.6; max |difference| 0.
 */
import { valueSweeps, sweepPlan } from "../solve/value-iteration.js";
import { planValueIteration, solveValuesEngine } from "../solve/engine/index.js";
import { hrClock, VI_TOL, type Clock } from "./lava-run.js";
import { LAVA_GAMMA, lavaModel } from "./lava.js";

export interface EngineComparison {
  W: number;
  H: number;
  states: number;
  textbook: { seconds: number; sweeps: number; backups: number };
  engine: {
    planSeconds: number;
    solveSeconds: number;
    seconds: number;
    backups: number;
    components: number;
    largestComponent: number;
    errorBound: number;
  };
  /** textbook seconds / engine seconds (plan + solve). */
  speedup: number;
  /** max_s |engine(s) - textbook(s)|. */
  maxDiff: number;
}

export function compareEngineOnLava(W: number, H: number, clock: Clock = hrClock): EngineComparison {
  const { model, reward } = lavaModel(W, H);
  const plan = sweepPlan(model, reward);
  const t0 = clock();
  const ref = valueSweeps(model, reward, { gamma: LAVA_GAMMA, tol: VI_TOL }, plan);
  const t1 = clock();
  const vplan = planValueIteration(model);
  const t2 = clock();
  const eng = solveValuesEngine(model, reward, { gamma: LAVA_GAMMA, accuracy: VI_TOL }, vplan);
  const t3 = clock();
  let maxDiff = 0;
  for (let s = 0; s < model.nStates; s++) maxDiff = Math.max(maxDiff, Math.abs(eng.values[s] - ref.values[s]));
  const engineSeconds = t3 - t1;
  return {
    W,
    H,
    states: model.nStates,
    textbook: { seconds: t1 - t0, sweeps: ref.iters, backups: ref.iters * plan.live.length },
    engine: {
      planSeconds: t2 - t1,
      solveSeconds: t3 - t2,
      seconds: engineSeconds,
      backups: eng.stats.backups,
      components: eng.stats.components,
      largestComponent: eng.stats.largestComponent,
      errorBound: eng.errorBound,
    },
    speedup: (t1 - t0) / engineSeconds,
    maxDiff,
  };
}
