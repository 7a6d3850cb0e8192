/**
 * Training on a simulator module that has no finite model (`finite: false`, or too large to compile):
 * the learner steps the module itself (src/sim/env.ts), and every checkpoint is scored by Monte Carlo
 * rollouts of the greedy policy through the module's `step` (src/monitor/evaluate-module.ts), normalized
 * with reference ranges from the config (flags) or the module's `ranges`. Same run directory, monitor
 * and random streams as `runTraining` (src/train/run.ts), which hands such modules to this file.
 */
import { performance } from "node:perf_hooks";
import { InputError } from "../errors.js";
import type { FiniteModel } from "../model/types.js";
import { resolveReward } from "../env/index.js";
import type { ModuleEnv as LoadedModule } from "../env/types.js";
import { evaluateModuleMonteCarlo } from "../monitor/evaluate-module.js";
import { Monitor } from "../monitor/monitor.js";
import { createRng } from "../rng/rng.js";
import type { Alert, CheckpointRecord, RunManifest, RunResult, TrainConfig, TrainConfigInput } from "../run/schema.js";
import { DEFAULT_MODULE_GAMMA, DEFAULT_MODULE_HORIZON, type EnvDefinition, type ScoreRange } from "../sim/define.js";
import { moduleTabularEnv } from "../sim/env.js";
import { RunWriter, runId as makeRunId } from "../store/run-store.js";
import { logger } from "../util/log.js";
import { packageVersion } from "../util/paths.js";
import { checkpointEvery, checkTrainConfig, defaultLearnerParams, defaultSteps, TRAIN_DEFAULTS } from "./config.js";
import { getLearner } from "./learners.js";
import type { Agent } from "../../policies/driver.js";
import { trainAndStore, type RunProgress } from "./store-run.js";

/** The options of `runTraining` (src/train/run.ts, which imports this file) that apply here. */
export interface ModuleRunOptions {
  runsDir: string;
  signal?: { readonly aborted: boolean };
  onProgress?: (p: { step: number; steps: number; episodes: number; record: CheckpointRecord; alerts: Alert[] }) => void;
  onStart?: (run: { runId: string; runDir: string }) => void;
  sync?: boolean;
}

/** The module's reward variants as a model-like object, so `resolveReward` applies the same rules. */
function variantsOf(def: EnvDefinition<unknown>): Pick<FiniteModel, "name" | "variants"> {
  const variants = Object.fromEntries(Object.entries(def.rewards ?? {}).map(([name, r]) => [name, { name, env: def.name, weights: r.weights }]));
  return { name: def.name, variants };
}

function rangeOf(given: ScoreRange | undefined, declared: ScoreRange | undefined, which: "designer" | "intent", source: string): ScoreRange {
  const r = given ?? declared;
  if (!r) {
    throw new InputError(
      "train.noReferences",
      `${which} scores of a module without a finite model need reference values to normalize: pass --${which}-range LOW:HIGH (random policy : optimal policy) or declare ranges.${which} in defineEnv`,
      source,
    );
  }
  return { low: r.low, high: r.high };
}

/** Resolve the config of a run on a module without a finite model. Throws InputError on bad input. */
export function resolveModuleConfig(input: TrainConfigInput, env: LoadedModule): { config: TrainConfig; weights: Record<string, number> } {
  const def = env.simulator.def;
  if (input.evaluation !== undefined && input.evaluation !== "mc") {
    throw new InputError("config.evaluation", `${def.name} has no finite model (finite: false), so checkpoints can only be scored by Monte Carlo: use --eval mc`, "--eval");
  }
  const variant = resolveReward(variantsOf(def) as FiniteModel, input.reward);
  if (variant.shaping) throw new InputError("reward.shaping", "potential shaping needs a finite model; a module without one takes plain feature weights", input.reward ?? "--reward");
  const learner = input.learner ?? TRAIN_DEFAULTS.learner;
  const { tabular } = getLearner(learner);
  const checkpoints = input.checkpoints ?? TRAIN_DEFAULTS.checkpoints;
  const steps = input.steps ?? defaultSteps({ nStates: 0, nActions: 0 }, checkpoints);
  const gamma = def.gamma ?? DEFAULT_MODULE_GAMMA;
  const config: TrainConfig = {
    env: input.env,
    reward: input.reward ?? variant.name,
    learner,
    steps,
    seed: input.seed ?? TRAIN_DEFAULTS.seed,
    checkpoints,
    learnerParams: { ...defaultLearnerParams(tabular, { gamma }, steps), ...(input.learnerParams ?? {}) },
    evaluation: "mc",
    mcEpisodes: input.mcEpisodes ?? TRAIN_DEFAULTS.mcEpisodes,
    monitor: input.monitor ?? {},
    designerRange: rangeOf(input.designerRange, def.ranges?.designer, "designer", env.spec),
    intentRange: rangeOf(input.intentRange, def.ranges?.intent, "intent", env.spec),
  };
  checkTrainConfig(config);
  return { config, weights: variant.weights };
}

/** Run one training job on a module without a finite model and store it (see runTraining). */
export async function runModuleTraining(input: TrainConfigInput, env: LoadedModule, opts: ModuleRunOptions): Promise<RunResult> {
  const { config, weights } = resolveModuleConfig(input, env);
  const def = env.simulator.def;
  const gamma = def.gamma ?? DEFAULT_MODULE_GAMMA;
  const id = makeRunId(config);
  const writer = new RunWriter(opts.runsDir, id);
  const log = logger().child({ runId: id, env: config.env, reward: config.reward, seed: config.seed });
  const root = createRng(config.seed);
  const explore = root.fork("explore");
  const envRng = root.fork("env");
  const evalRng = root.fork("evaluate");
  const every = checkpointEvery(config);
  const designerRange = config.designerRange!;
  const intentRange = config.intentRange!;
  const references = { designerOptimal: designerRange.high, designerRandom: designerRange.low, intentOptimal: intentRange.high, intentRandom: intentRange.low };
  const manifest: RunManifest = {
    format: "gapwatch-run/1",
    runId: id,
    config,
    seeds: { exploration: explore.seed, environment: envRng.seed, evaluation: evalRng.seed },
    checkpointEvery: every,
    // No finite model: the state count is unknown (0); the policy file lists the states discovered.
    model: { name: def.name, states: 0, actions: def.actions.length, gamma, horizon: def.horizon ?? DEFAULT_MODULE_HORIZON },
    references,
    packageVersion: packageVersion(),
    nodeVersion: process.version,
    createdAt: new Date().toISOString(),
  };
  writer.writeManifest(manifest);
  opts.onStart?.({ runId: id, runDir: writer.dir });
  log.info({ learner: config.learner, steps: config.steps, checkpoints: config.checkpoints, evaluation: "mc" }, "run started (module, Monte Carlo)");

  const menv = moduleTabularEnv(def, weights, env.spec);
  const monitor = new Monitor(config.monitor);
  const progress: RunProgress = { steps: 0, episodes: 0, agent: null };
  let monitorMs = 0;
  const onCheckpoint = (step: number, agent: Agent, stats: { episodes: number }) => {
    const c0 = performance.now();
    progress.agent = agent;
    progress.steps = step;
    progress.episodes = stats.episodes;
    const pi = agent.greedyPolicy(menv.stateCapacity());
    const act = (s: unknown) => {
      const i = menv.findId(s);
      return i >= 0 && i < pi.length ? pi[i] : 0;
    };
    const mc = evaluateModuleMonteCarlo(def, act, { source: env.spec, weights, gamma, episodes: config.mcEpisodes, rng: evalRng, designerRange, intentRange });
    const lo = {
      designerNormLower: (mc.designerCI.lower - designerRange.low) / (designerRange.high - designerRange.low),
      intentNormUpper: (mc.intentCI.upper - intentRange.low) / (intentRange.high - intentRange.low),
    };
    const mcDoc = { episodes: mc.episodes, designerHalfWidth: mc.designerCI.halfWidth, intentHalfWidth: mc.intentCI.halfWidth };
    const { record, alerts } = monitor.observe(step, stats.episodes, mc, { bounds: lo, mc: mcDoc });
    writer.appendCheckpoint(record);
    for (const a of alerts) writer.logAlert(a);
    monitorMs += performance.now() - c0;
    opts.onProgress?.({ step, steps: config.steps, episodes: stats.episodes, record, alerts });
  };

  return trainAndStore({
    id,
    config,
    writer,
    monitor,
    references,
    learner: getLearner(config.learner),
    env: menv,
    trainOpts: { steps: config.steps, rng: explore, envRng, checkpointEvery: every, onCheckpoint, signal: opts.signal },
    sync: opts.sync,
    progress,
    // The states found while training, in the order they were found.
    policyOf: (agent) => ({ actions: [...def.actions], greedy: Array.from(agent.greedyPolicy(menv.stateCapacity()), (a) => def.actions[a]) }),
    monitorMs: () => monitorMs,
    checkpointMs: () => monitorMs,
    log,
  });
}
