/** `gapwatch pressure`: the optimization-pressure (Goodhart) curve, and the files asked for. */
import { loadFiniteVariant } from "../env/resolve.js";
import { pressureCurve } from "../pressure/curve.js";
import { learnerCurve } from "../pressure/learners.js";
import { readReferenceFile } from "../pressure/reference.js";
import { PRESSURE_FILE } from "../report/data.js";
import { renderPressureReport } from "../report/standalone.js";
import { packageVersion } from "../util/paths.js";
import { checkRunDir, outputsDoc, writeDocumentOutputs, type DocumentOutputOptions } from "./outputs.js";

export interface PressureConfig extends DocumentOutputOptions {
  env: string;
  reward?: string;
  /** A reference policy file (default uniform random). */
  reference?: string;
  /** Also train Q-learning at increasing budgets. */
  learners?: boolean;
  seed?: number;
  /** State bound when `env` is a simulator module. */
  maxStates?: number;
  /** The command line shown in the HTML report's settings. */
  command?: string;
}

/** The curve; `doc` is what `pressure --json` prints (the curve plus the files written). */
export async function runPressure(cfg: PressureConfig) {
  checkRunDir(cfg.runDir);
  const { model, variant } = await loadFiniteVariant(cfg.env, cfg.reward, { command: "pressure", maxStates: cfg.maxStates });
  const reference = cfg.reference ? readReferenceFile(model, cfg.reference) : undefined;
  const curve = pressureCurve(model, variant, { reference });
  const learners = cfg.learners ? learnerCurve(model, variant, { seed: cfg.seed ?? 1 }) : undefined;
  const body: Record<string, unknown> = { points: curve.points, peak: curve.peak, onset: curve.onset, scale: curve.scale };
  if (learners) body.learners = learners;
  const env = model.name;
  const reward = variant.name;
  // The files carry the environment and reward, so a report read later can name them.
  const fileDoc = { env, reward, ...body };
  const settings = {
    ...(cfg.command !== undefined ? { command: cfg.command } : {}),
    reference: cfg.reference ?? "uniform random",
    ...(cfg.learners ? { "learner seed": cfg.seed ?? 1 } : {}),
  };
  const written = await writeDocumentOutputs(cfg, {
    kind: "pressure",
    file: PRESSURE_FILE,
    env,
    reward,
    doc: fileDoc,
    render: () => renderPressureReport({ pressure: fileDoc, settings, version: packageVersion() }),
  });
  return { curve, learners, env, reward, written, doc: { ...body, ...outputsDoc(written) } };
}
