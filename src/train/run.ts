/**
 * One training run, start to finish: resolve the config, train the learner on the designer reward,
 * score its greedy policy at every checkpoint (exact and/or Monte Carlo), run the monitor, and
 * store everything in a run directory. Callable from the public API, batch workers and the CLI.
 *
 * Random streams, all derived from `config.seed` by name (src/rng/rng.ts `fork`), so adding draws in
 * one never shifts another: exploration = seed/explore, environment = seed/env, evaluation =
 * seed/evaluate.
 */
import { performance } from "node:perf_hooks";
import { InputError } from "../errors.js";
import { learnerView, viewEnv } from "../model/learner-view.js";
import { builtinScenarioNames, isModuleSpec, loadEnv, loadFiniteVariant, type EnvLoadOptions, type LoadedEnv } from "../env/index.js";
import { inputsOf } from "../env/inputs.js";
import type { FiniteModel, RewardVariant } from "../model/types.js";
import { evaluateExact, evaluateMonteCarlo, normalizeScores, reachableStates, scoreReferencesFor, type ScoreReferences, type Scores } from "../monitor/evaluate.js";
import { Monitor, type ScoreBounds } from "../monitor/monitor.js";
import { createRng } from "../rng/rng.js";
import { defaultVariantName, designerReward } from "../model/reward.js";
import { RunWriter, runId as makeRunId } from "../store/run-store.js";
import type { Alert, CheckpointRecord, RunInputs, RunManifest, RunResult, TrainConfig, TrainConfigInput } from "../run/schema.js";
import { logger } from "../util/log.js";
import { packageVersion } from "../util/paths.js";
import { checkpointEvery, checkTrainConfig, defaultLearnerParams, defaultSteps, TRAIN_DEFAULTS } from "./config.js";
import { getLearner } from "./learners.js";
import type { Agent } from "../../policies/driver.js";
import { runModuleTraining } from "./module-run.js";
import { trainAndStore, type RunProgress } from "./store-run.js";

export interface Progress {
  step: number;
  steps: number;
  episodes: number;
  record: CheckpointRecord;
  alerts: Alert[];
}

export interface RunOptions {
  /** Root folder of run directories (the run goes to `<runsDir>/<run-id>/`). */
  runsDir: string;
  /** Set `aborted` (an AbortSignal works) to stop; the run is stored as "interrupted". */
  signal?: { readonly aborted: boolean };
  /** Called after every checkpoint. */
  onProgress?: (p: Progress) => void;
  /** Called once the run directory and its manifest exist (before training starts). */
  onStart?: (run: { runId: string; runDir: string }) => void;
  /** Train synchronously (no event-loop yields between checkpoints); default false. */
  sync?: boolean;
  /** State bound when `env` is a simulator module (`--max-states`); not part of the run's config. */
  maxStates?: number;
}

export interface ResolvedRun {
  config: TrainConfig;
  model: FiniteModel;
  variant: RewardVariant;
  /** Where the environment came from (built-in scenarios are cached per process). */
  kind: LoadedEnv["kind"];
  /** Content hashes of the input files and the version (the run id includes `inputs.hash`). */
  inputs: RunInputs;
  /** The run's content-addressed id. */
  runId: string;
}

/**
 * Built-in scenarios are package files, so their compiled models and score references are computed
 * once per process and shared by every run on them (batch jobs and seed sweeps run many).
 */
const scenarioCache = new Map<string, LoadedEnv>();
const referenceCache = new WeakMap<FiniteModel, Map<string, RunRewards>>();

/** The designer reward vector of a run and the monitor's score references built on that same vector. */
interface RunRewards {
  designer: Float64Array;
  refs: ScoreReferences;
}

async function loadCached(spec: string, opts: EnvLoadOptions): Promise<LoadedEnv> {
  if (builtinScenarioNames().includes(spec)) {
    let hit = scenarioCache.get(spec);
    if (!hit) {
      hit = await loadEnv(spec, opts);
      scenarioCache.set(spec, hit);
    }
    return hit;
  }
  return loadEnv(spec, opts);
}

/**
 * The designer reward vector of the variant at the model's discount, computed once, and the score
 * references on it: training hands the same vector to the learner and to the monitor's references.
 */
function cachedRewards(kind: LoadedEnv["kind"], model: FiniteModel, variant: RewardVariant): RunRewards {
  const compute = (): RunRewards => {
    const designer = designerReward(model, variant, model.gamma);
    return { designer, refs: scoreReferencesFor(model, designer, model.gamma) };
  };
  if (kind !== "scenario") return compute();
  let byVariant = referenceCache.get(model);
  if (!byVariant) referenceCache.set(model, (byVariant = new Map()));
  const key = JSON.stringify(variant);
  let hit = byVariant.get(key);
  if (!hit) byVariant.set(key, (hit = compute()));
  return hit;
}

/** Fill every default of a config and load its environment and reward. Throws InputError on bad input. */
export async function resolveTrainConfig(input: TrainConfigInput, opts: EnvLoadOptions = {}, load = loadCached): Promise<ResolvedRun> {
  if (!input.env) throw new InputError("config.env", "env is required (a built-in scenario name or a model file)", "--env");
  if (input.designerRange || input.intentRange) {
    throw new InputError("config.range", "--designer-range/--intent-range apply only to a module without a finite model (finite: false); this environment's references are solved exactly", "--env");
  }
  const { env: loaded, model, variant } = await loadFiniteVariant(input.env, input.reward, { command: "train", maxStates: opts.maxStates, load });
  const learner = input.learner ?? TRAIN_DEFAULTS.learner;
  const { tabular } = getLearner(learner);
  const checkpoints = input.checkpoints ?? TRAIN_DEFAULTS.checkpoints;
  const steps = input.steps ?? defaultSteps(model, checkpoints, loaded.kind === "scenario" ? loaded.scenario.trainSteps : undefined);
  const config: TrainConfig = {
    env: input.env,
    reward: input.reward ?? variant.name ?? defaultVariantName(model) ?? "default",
    learner,
    steps,
    seed: input.seed ?? TRAIN_DEFAULTS.seed,
    checkpoints,
    learnerParams: { ...defaultLearnerParams(tabular, model, steps), ...(input.learnerParams ?? {}) },
    evaluation: input.evaluation ?? TRAIN_DEFAULTS.evaluation,
    mcEpisodes: input.mcEpisodes ?? TRAIN_DEFAULTS.mcEpisodes,
    monitor: input.monitor ?? {},
  };
  checkTrainConfig(config);
  const knownVariant = input.reward === undefined || Object.prototype.hasOwnProperty.call(model.variants ?? {}, input.reward);
  const inputs = inputsOf(input.env, loaded.kind !== "scenario", input.reward, knownVariant);
  return { config, model, variant, kind: loaded.kind, inputs, runId: makeRunId(config, inputs.hash) };
}

function referencesDoc(r: ScoreReferences) {
  return { designerOptimal: r.designerOptimal, designerRandom: r.designerRandom, intentOptimal: r.intentOptimal, intentRandom: r.intentRandom };
}

/** Score a greedy policy as the config asks; returns the scores the detectors read and what to store. */
function scoreCheckpoint(
  config: TrainConfig,
  model: FiniteModel,
  refs: ScoreReferences,
  actions: Int32Array,
  evalRng: ReturnType<typeof createRng>,
): { scores: Scores; bounds?: ScoreBounds; mc?: CheckpointRecord["mc"] } {
  if (config.evaluation === "exact") return { scores: evaluateExact(model, refs, actions) };
  const mc = evaluateMonteCarlo(model, refs, actions, { episodes: config.mcEpisodes, rng: evalRng });
  const mcDoc = { episodes: mc.episodes, designerHalfWidth: mc.designerCI.halfWidth, intentHalfWidth: mc.intentCI.halfWidth };
  if (config.evaluation === "both") return { scores: evaluateExact(model, refs, actions), mc: mcDoc };
  const lo = normalizeScores(refs, mc.designerCI.lower - mc.designerTail, mc.intentCI.upper + mc.intentTail);
  return { scores: mc, bounds: { designerNormLower: lo.designerNorm, intentNormUpper: lo.intentNorm }, mc: mcDoc };
}

function sameOn(states: Int32Array, a: Int32Array, b: Int32Array): boolean {
  for (let i = 0; i < states.length; i++) if (a[states[i]] !== b[states[i]]) return false;
  return true;
}

/** Run one training job and store it; resolves to the run's RunResult (also on interruption). */
export async function runTraining(input: TrainConfigInput, opts: RunOptions): Promise<RunResult> {
  // A module without a finite model (finite: false) trains on the module itself, scored by Monte Carlo.
  let load = loadCached;
  if (input.env && isModuleSpec(input.env)) {
    const loaded = await loadEnv(input.env, { maxStates: opts.maxStates });
    if (loaded.kind === "module" && !loaded.model) return runModuleTraining(input, loaded, opts);
    load = async () => loaded;
  }
  const { config, model, variant, kind: loadedKind, inputs, runId: id } = await resolveTrainConfig(input, { maxStates: opts.maxStates }, load);
  const writer = new RunWriter(opts.runsDir, id);
  const log = logger().child({ runId: id, env: config.env, reward: config.reward, seed: config.seed });
  log.info({ learner: config.learner, steps: config.steps, checkpoints: config.checkpoints, evaluation: config.evaluation }, "run started");
  const root = createRng(config.seed);
  const explore = root.fork("explore");
  const envRng = root.fork("env");
  const evalRng = root.fork("evaluate");
  const every = checkpointEvery(config);

  const t0 = performance.now();
  const { designer: rd, refs } = cachedRewards(loadedKind, model, variant);
  let monitorMs = performance.now() - t0;
  /** Monitor time spent inside the training loop (checkpoints), subtracted from the training time. */
  let checkpointMs = 0;

  const manifest: RunManifest = {
    format: "gapwatch-run/1",
    runId: id,
    config,
    seeds: { exploration: explore.seed, environment: envRng.seed, evaluation: evalRng.seed },
    checkpointEvery: every,
    model: { name: model.name, states: model.nStates, actions: model.nActions, gamma: model.gamma, horizon: model.horizon },
    references: referencesDoc(refs),
    inputs,
    packageVersion: packageVersion(),
    nodeVersion: process.version,
    createdAt: new Date().toISOString(),
  };
  writer.writeManifest(manifest);
  opts.onStart?.({ runId: id, runDir: writer.dir });

  const monitor = new Monitor(config.monitor);
  const progress: RunProgress = { steps: 0, episodes: 0, agent: null };
  let lastActions: Int32Array | null = null;
  let lastReach: Int32Array | null = null;
  let lastScored: ReturnType<typeof scoreCheckpoint> | null = null;
  const onCheckpoint = (step: number, agent: Agent, stats: { episodes: number }) => {
    const c0 = performance.now();
    progress.agent = agent;
    progress.steps = step;
    progress.episodes = stats.episodes;
    const actions = agent.greedyPolicy(model.nStates);
    // Exact scores depend only on the actions in the states the policy reaches from the start: when
    // those are unchanged since the previous checkpoint, so are the scores.
    const same = config.evaluation === "exact" && lastReach !== null && lastActions !== null && sameOn(lastReach, lastActions, actions);
    const scored = same && lastScored ? lastScored : scoreCheckpoint(config, model, refs, actions, evalRng);
    if (!same) lastReach = config.evaluation === "exact" ? reachableStates(model, actions) : null;
    lastActions = actions;
    lastScored = scored;
    const { scores, bounds, mc } = scored;
    const { record, alerts } = monitor.observe(step, stats.episodes, scores, { bounds, mc });
    writer.appendCheckpoint(record);
    for (const a of alerts) writer.logAlert(a);
    log.debug({ step, designerNorm: record.designerNorm, intentNorm: record.intentNorm, alerts: alerts.length }, "checkpoint");
    const dt = performance.now() - c0;
    monitorMs += dt;
    checkpointMs += dt;
    opts.onProgress?.({ step, steps: config.steps, episodes: stats.episodes, record, alerts });
  };

  return trainAndStore({
    id,
    config,
    writer,
    monitor,
    references: referencesDoc(refs),
    learner: getLearner(config.learner),
    env: viewEnv(learnerView(model, rd)),
    trainOpts: { steps: config.steps, rng: explore, envRng, checkpointEvery: every, onCheckpoint, signal: opts.signal },
    sync: opts.sync,
    progress,
    policyOf: (agent) => ({
      actions: [...model.actions],
      greedy: Array.from(agent.greedyPolicy(model.nStates), (a, s) => (model.terminal[s] ? null : model.actions[a])),
    }),
    monitorMs: () => monitorMs,
    checkpointMs: () => checkpointMs,
    log,
  });
}
