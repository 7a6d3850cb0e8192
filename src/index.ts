/**
 * gapwatch's public entry point. Everything a CLI command does is callable from here: the command
 * handlers are in src/app; this file never imports src/cli. The command line itself, as a function
 * (`runCli(argv, io)`), is the package's second entry point, `gapwatch/cli`.
 */
export { defineEnv, type EnvDefinition, type StepResult, type Outcome, type EnvProperty } from "./sim/define.js";
export type { FiniteModel, RewardVariant, Layout } from "./model/types.js";
export { ModelBuilder } from "./model/builder.js";
export { designerReward, expectedPerStateAction } from "./model/reward.js";
export { learnerView, viewEnv, type LearnerView, type TabularEnv, type StepOut } from "./model/learner-view.js";
export { loadEnv, loadEnvSync, loadScenario, resolveReward, builtinScenarioNames, loadFinite, loadFiniteVariant, requireFinite, type LoadedEnv, type FiniteEnv } from "./env/index.js";
export type { ScenarioMeta, TrapKind } from "./model/scenario.js";
export type { SimulatorHandle } from "./sim/load.js";
export { parseModelFile, loadModelFile } from "./model/format/model-file.js";
export { parseRewardFile } from "./model/format/reward-file.js";
export { exportModel, formatModelDocument } from "./model/format/export.js";
export { DEFAULT_HORIZON, MODEL_FORMAT, REWARD_FORMAT, type ModelDocument } from "./model/format/schema.js";
export * from "./solve/index.js";
export { createRng, Xorshift32, type Rng } from "./rng/rng.js";
export { GapwatchError, InputError, EXIT, formatError } from "./errors.js";
export { runTraining, resolveTrainConfig } from "./train/run.js";
export { readRun } from "./store/run-store.js";
export type { TrainConfig, TrainConfigInput, RunResult, RunSummary, RunManifest } from "./run/schema.js";
export { openIndex, indexRun } from "./store/index-db.js";
export { runCompare } from "./batch/compare.js";
export { runAudit, runAuditDetailed } from "./audit/run.js";
export { maxMeanCycle, minMeanCycle } from "./audit/cycles.js";
export { modelChoiceGraph } from "./audit/choice-graph.js";
export { checkPotentialShaping } from "./audit/shaping.js";
export { indifferenceProbability } from "./audit/indifference.js";
export { pressureCurve } from "./pressure/curve.js";
export { runCheck } from "./check/run.js";
export { writeReport, renderReportFor } from "./report/index.js";
export * from "./app/index.js";
export { learners, train, defaultLearner } from "../policies/index.js";
export * as stats from "./stats/index.js";
export * as detectors from "./monitor/detectors/index.js";

export { splitLayout, withLayout, parseLayoutRange, fileFamily } from "./env/index.js";
export { searchWeights, layoutRegret, okInterval, diagnose, summarizeHoldout, GAMING_AT, type FeatureBounds, type LayoutModel } from "./tune/search.js";
export { runRetune, evaluateHoldout, type RetuneDoc, type RetuneInput } from "./tune/run.js";
