/**
 * Benchmark entry "monitor": what the checkpoint monitor costs relative to training, on the shared
 * workload (32 x 32 open field with lava, tabular Q-learning, 5 000 000 steps, PROBLEM.md section 5
 * parameters), at the default checkpoint count (20). Measured in-process, best of a few rounds:
 *   training time   trainQLearning with no checkpoint callback;
 *   monitor time    score references once per run (value iteration and uniform-policy evaluation of
 *                   the designer reward and of intent) plus, at each checkpoint, reading the greedy
 *                   policy, exact evaluation (src/monitor/evaluate.ts) and the detectors.
 * Target: monitor / training < 10%. Reported, never enforced.
 */
import { performance } from "node:perf_hooks";
import { learnerView, viewEnv } from "../model/learner-view.js";
import { evaluateExact, scoreReferences } from "../monitor/evaluate.js";
import { Monitor } from "../monitor/monitor.js";
import { Xorshift32 } from "../rng/rng.js";
import { TRAIN_DEFAULTS } from "../train/config.js";
import { trainQLearning } from "../../policies/qlearning.js";
import { LAVA_VARIANT, lavaModel } from "./lava.js";
import { QL_ALPHA, QL_EPSILON, QL_GAMMA, QL_SEED, QL_STEPS } from "./lava-run.js";

export interface MonitorBench {
  steps: number;
  checkpoints: number;
  trainSeconds: number;
  /** All monitor work: references + checkpoints. */
  monitorSeconds: number;
  /** The one-time part (score references) and the per-checkpoint part. */
  referenceSeconds: number;
  checkpointSeconds: number;
  ratio: number;
  checkpointRatio: number;
}

/** One measurement (best of `rounds`): training alone, then the monitor's work on the same run's checkpoints. */
export function measureMonitor(rounds = 3, steps = QL_STEPS, checkpoints: number = TRAIN_DEFAULTS.checkpoints): MonitorBench {
  const problem = lavaModel(32, 32);
  const { model } = problem;
  const env = viewEnv(learnerView(model, problem.reward));
  const config = { alpha: QL_ALPHA, gamma: QL_GAMMA, epsilon: QL_EPSILON };
  const every = Math.ceil(steps / checkpoints);
  let bestTrain = Infinity;
  let bestMonitor = Infinity;
  let bestRefs = Infinity;
  let bestCheckpoints = Infinity;
  for (let r = 0; r < rounds; r++) {
    const t0 = performance.now();
    trainQLearning(env, config, { steps, rng: new Xorshift32(QL_SEED) });
    bestTrain = Math.min(bestTrain, performance.now() - t0);

    let monitorMs = 0;
    const m0 = performance.now();
    const refs = scoreReferences(model, LAVA_VARIANT, model.gamma);
    const monitor = new Monitor();
    const refsMs = performance.now() - m0;
    monitorMs += refsMs;
    trainQLearning(env, config, {
      steps,
      rng: new Xorshift32(QL_SEED),
      checkpointEvery: every,
      onCheckpoint: (step, agent, stats) => {
        const c0 = performance.now();
        monitor.observe(step, stats.episodes, evaluateExact(model, refs, agent.greedyPolicy(model.nStates)));
        monitorMs += performance.now() - c0;
      },
    });
    bestMonitor = Math.min(bestMonitor, monitorMs);
    bestRefs = Math.min(bestRefs, refsMs);
    bestCheckpoints = Math.min(bestCheckpoints, monitorMs - refsMs);
  }
  return {
    steps,
    checkpoints,
    trainSeconds: bestTrain / 1000,
    monitorSeconds: bestMonitor / 1000,
    referenceSeconds: bestRefs / 1000,
    checkpointSeconds: bestCheckpoints / 1000,
    ratio: bestMonitor / bestTrain,
    checkpointRatio: bestCheckpoints / bestTrain,
  };
}

/** Entry for src/bench/main.ts (structurally a BenchEntry). */
export const monitorEntry = {
  name: "monitor",
  title: "checkpoint monitor overhead (exact evaluation + detectors at 20 checkpoints vs Q-learning training, lava 32x32)",
  run(ctx: { opts: { quick: boolean } }): { ok: boolean; summary: string[] } {
    const r = measureMonitor(ctx.opts.quick ? 1 : 3);
    const pct = (100 * r.ratio).toFixed(1);
    process.stdout.write(
      `monitor: training ${r.trainSeconds.toFixed(3)} s for ${r.steps} steps; monitor ${r.monitorSeconds.toFixed(4)} s = references ${r.referenceSeconds.toFixed(4)} s (once per run) + ${r.checkpoints} checkpoints ${r.checkpointSeconds.toFixed(4)} s (best of rounds)\n\n`,
    );
    const cp = (100 * r.checkpointRatio).toFixed(1);
    return {
      ok: true,
      summary: [`monitor: ${pct}% of training time at ${r.checkpoints} checkpoints, of which checkpoints ${cp}% and one-time references the rest (target < 10%: ${r.ratio < 0.1 ? "met" : "NOT met"})`],
    };
  },
};

const isMain = process.argv[1] && import.meta.url.endsWith(process.argv[1].replace(/.*\//, ""));
if (isMain) {
  const r = measureMonitor();
  process.stdout.write(JSON.stringify(r) + "\n");
}
