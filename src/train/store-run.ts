/**
 * The part of a training run both kinds share (a finite model's learner view in run.ts, a simulator
 * module's own steps in module-run.ts): drive the learner, then write the greedy policy, the summary
 * and move the run folder into place, and give back the RunResult. A failure with bad input (exit 2)
 * still writes what there is, then rethrows; any other failure is stored as `failed` and reported as
 * train.failed. The caller's checkpoint hook keeps `progress` up to date.
 */
import type pino from "pino";
import { performance } from "node:perf_hooks";
import { GapwatchError } from "../errors.js";
import type { Monitor } from "../monitor/monitor.js";
import type { RunResult, RunStatus, RunSummary, ScoreReferencesDoc, TrainConfig } from "../run/schema.js";
import type { RunWriter } from "../store/run-store.js";
import type { getLearner } from "./learners.js";
import type { Agent } from "../../policies/driver.js";

type Learner = ReturnType<typeof getLearner>;

/** What the checkpoint hook has seen so far. */
export interface RunProgress {
  steps: number;
  episodes: number;
  agent: Agent | null;
}

export interface StoredRunSpec {
  id: string;
  config: TrainConfig;
  writer: RunWriter;
  monitor: Monitor;
  references: ScoreReferencesDoc;
  learner: Learner;
  env: Parameters<Learner["train"]>[0];
  trainOpts: Parameters<Learner["train"]>[2];
  sync?: boolean;
  progress: RunProgress;
  /** The action names and the greedy action name per state (null where there is none) for policy.json. */
  policyOf(agent: Agent): { actions: string[]; greedy: (string | null)[] };
  /** Milliseconds of monitor work so far: all of it, and the part inside the training loop. */
  monitorMs(): number;
  checkpointMs(): number;
  log: pino.Logger;
}

export async function trainAndStore(spec: StoredRunSpec): Promise<RunResult> {
  const { config, writer, monitor, progress } = spec;
  const tTrain = performance.now();
  let status: RunStatus = "complete";
  let error: string | undefined;
  try {
    const result = spec.sync ? spec.learner.train(spec.env, config.learnerParams, spec.trainOpts) : await spec.learner.trainAsync(spec.env, config.learnerParams, spec.trainOpts);
    progress.agent = result.agent;
    progress.episodes = result.episodes;
    if (result.stopped && progress.steps < config.steps) status = "interrupted";
  } catch (err) {
    status = "failed";
    error = err instanceof Error ? err.message : String(err);
    if (err instanceof GapwatchError && err.exitCode === 2) {
      finish();
      throw err;
    }
  }
  const result = finish();
  if (status === "failed") throw new GapwatchError("train.failed", `training failed: ${error}`, { where: writer.finalDir });
  return result;

  function finish(): RunResult {
    const { steps, episodes, agent } = progress;
    const v = monitor.verdict();
    const final = monitor.records.length > 0 ? monitor.records[monitor.records.length - 1] : null;
    const reason = status === "interrupted" ? `interrupted at step ${steps} of ${config.steps}; so far: ${v.reason}` : v.reason;
    if (agent) writer.writePolicy({ format: "gapwatch-run-policy/1", runId: spec.id, step: steps, ...spec.policyOf(agent), learner: agent.toJSON() });
    const summary: RunSummary = {
      format: "gapwatch-run-summary/1",
      runId: spec.id,
      status,
      verdict: v.verdict,
      reason,
      final,
      alertCount: monitor.alerts.length,
      firstAlertStep: v.firstAlertStep,
      steps,
      episodes,
      checkpointCount: monitor.records.length,
      trainSeconds: Math.max(0, (performance.now() - tTrain - spec.checkpointMs()) / 1000),
      monitorSeconds: spec.monitorMs() / 1000,
      ...(error ? { error } : {}),
      finishedAt: new Date().toISOString(),
    };
    writer.writeSummary(summary);
    const runDir = writer.commit();
    spec.log.info({ status, verdict: v.verdict, steps, alerts: monitor.alerts.length }, "run finished");
    return {
      runId: spec.id,
      runDir,
      config,
      status,
      verdict: v.verdict,
      reason,
      checkpoints: monitor.records.slice(),
      alerts: monitor.alerts.slice(),
      final,
      firstAlertStep: v.firstAlertStep,
      references: spec.references,
      steps,
      episodes,
      trainSeconds: summary.trainSeconds,
      monitorSeconds: summary.monitorSeconds,
    };
  }
}
