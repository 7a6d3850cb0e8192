/** `gapwatch export`: an environment as a model file document (gapwatch-mdp/1). */
import { loadFinite } from "../env/resolve.js";
import { formatDrn } from "../model/drn-export.js";
import { exportModel } from "../model/format/export.js";
import { encodeBinaryModel } from "../model/format/binary.js";

export interface ExportConfig {
  env: string;
  /**
   * "json" (gapwatch-mdp/1, default), "drn" (the explicit format of probabilistic model checkers) or
   * "gwbin" (the compact binary companion, src/model/format/binary.ts: `bytes` holds the file).
   */
  format?: "json" | "drn" | "gwbin";
  /** State bound when `env` is a simulator module. */
  maxStates?: number;
}

/**
 * The model document; `doc` is what `export` prints (with or without --json). With `format: "drn"`,
 * `text` is the DRN file and `warnings` say what DRN cannot carry (per-outcome rewards, variants).
 */
export async function runExport(cfg: ExportConfig) {
  const { model } = await loadFinite(cfg.env, { command: "export", maxStates: cfg.maxStates });
  if (cfg.format === "gwbin") return { doc: null, text: "", bytes: encodeBinaryModel(model), warnings: [] as string[] };
  if (cfg.format === "drn") {
    const { text, warnings } = formatDrn(model);
    return { doc: null, text, warnings };
  }
  const doc = exportModel(model);
  return { doc, text: JSON.stringify(doc, null, 1) + "\n", warnings: [] as string[] };
}
