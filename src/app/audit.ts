/** `gapwatch audit`: static checks of a reward on the finite model, and the files asked for. */
import { runAuditDetailed, type AuditReport } from "../audit/run.js";
import { loadFiniteVariant } from "../env/resolve.js";
import { AUDIT_FILE } from "../report/data.js";
import { renderAuditReport } from "../report/standalone.js";
import { packageVersion } from "../util/paths.js";
import { checkRunDir, outputsDoc, writeDocumentOutputs, type DocumentOutputOptions } from "./outputs.js";

export interface AuditConfig extends DocumentOutputOptions {
  env: string;
  reward?: string;
  maxRisk?: number;
  sensitivity?: boolean;
  /** State bound when `env` is a simulator module. */
  maxStates?: number;
  /** The command line shown in the HTML report's settings. */
  command?: string;
}

/**
 * Audit; `doc` is what `audit --json` prints (the findings plus the files written), `audit` the
 * document stored in the files, `model` and `result` are for drawing the evidence.
 */
export async function runAuditCommand(cfg: AuditConfig) {
  checkRunDir(cfg.runDir);
  const { model, variant } = await loadFiniteVariant(cfg.env, cfg.reward, { command: "audit", maxStates: cfg.maxStates });
  const result = runAuditDetailed(model, variant, { maxRisk: cfg.maxRisk, sensitivity: cfg.sensitivity });
  const audit: AuditReport = { env: result.env, reward: result.reward, findings: result.findings, regret: result.regret, regretNorm: result.regretNorm, loops: result.loops };
  const settings = {
    ...(cfg.command !== undefined ? { command: cfg.command } : {}),
    "largest tolerated risk": cfg.maxRisk ?? "0.01 (default)",
    "weight sensitivity": cfg.sensitivity === false ? "skipped" : "checked",
  };
  const written = await writeDocumentOutputs(cfg, {
    kind: "audit",
    file: AUDIT_FILE,
    env: audit.env,
    reward: audit.reward,
    doc: audit,
    render: () => renderAuditReport({ audit: { ...audit }, model, settings, version: packageVersion() }),
  });
  return { model, result, audit, written, doc: { ...audit, ...outputsDoc(written) } };
}
