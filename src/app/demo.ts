/**
 * `gapwatch demo`: the default learner on every built-in scenario, once with each gaming and each
 * sound reward variant, recording which decoupled and at which checkpoint (first alert).
 */
import { defaultLearner } from "../../policies/index.js";
import { builtinScenarioNames, readScenarioMeta } from "../env/scenarios.js";
import { sparklines } from "../report/terminal.js";
import { writeReport } from "../report/write.js";
import type { RunResult } from "../run/schema.js";
import { runTraining } from "../train/run.js";
import { demoSharedBudget, sharedBudgetDoc } from "./demo-pressure.js";
import { layoutStory } from "./demo-layouts.js";

export interface DemoRow {
  env: string;
  reward: string;
  /** "gaming" or "sound", as the scenario labels the variant. */
  expected: "gaming" | "sound";
  verdict: RunResult["verdict"];
  firstAlertStep: number | null;
  steps: number;
  designerNorm: number | null;
  intentNorm: number | null;
  runDir: string;
  designerSpark: string;
  intentSpark: string;
}

export async function runDemo(opts: { runsDir: string; seed: number; learner?: string; signal?: { aborted: boolean } }): Promise<DemoRow[]> {
  const rows: DemoRow[] = [];
  for (const env of builtinScenarioNames()) {
    const meta = readScenarioMeta(env);
    const plan = [...meta.gaming.map((r) => [r, "gaming"] as const), ...meta.sound.map((r) => [r, "sound"] as const)];
    for (const [reward, expected] of plan) {
      if (opts.signal?.aborted) return rows;
      const r = await runTraining({ env, reward, seed: opts.seed, learner: opts.learner ?? defaultLearner }, { runsDir: opts.runsDir, signal: opts.signal });
      const sp = sparklines(r);
      rows.push({
        env,
        reward,
        expected,
        verdict: r.verdict,
        firstAlertStep: r.firstAlertStep,
        steps: r.steps,
        designerNorm: r.final?.designerNorm ?? null,
        intentNorm: r.final?.intentNorm ?? null,
        runDir: r.runDir,
        designerSpark: sp.designer,
        intentSpark: sp.intent,
      });
    }
  }
  return rows;
}

export interface DemoCommandConfig {
  runsDir: string;
  seed: number;
  /** Also write an HTML report into every run directory. */
  report?: boolean;
  signal?: { aborted: boolean };
}

/** The demo; `doc` is what `demo --json` prints, `rows` and `reports` are for the table. */
export async function runDemoCommand(cfg: DemoCommandConfig) {
  const rows = await runDemo({ runsDir: cfg.runsDir, seed: cfg.seed, signal: cfg.signal });
  // The shared-budget pressure curve (its pressure.json goes into the matching runs before their reports are written).
  const sharedBudget = cfg.signal?.aborted ? null : await demoSharedBudget({ runs: rows, report: cfg.report });
  const reports: string[] = [];
  if (cfg.report) for (const row of rows) reports.push(await writeReport(row.runDir));
  const layouts = await layoutStory();
  const doc = {
    seed: cfg.seed,
    runs: rows.map(({ designerSpark: _d, intentSpark: _i, ...rest }, i) => (cfg.report ? { ...rest, report: reports[i] } : rest)),
    ...(sharedBudget ? { sharedBudget: sharedBudgetDoc(sharedBudget) } : {}),
    layouts: layouts.doc,
  };
  return { rows, reports, sharedBudget, doc, layoutLines: layouts.lines };
}
