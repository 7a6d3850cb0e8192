/** `gapwatch export`: an environment as a model file document (gapwatch-mdp/1). */
import { loadFinite } from "../env/resolve.js";
import { exportModel } from "../model/format/export.js";

export interface ExportConfig {
  env: string;
  /** State bound when `env` is a simulator module. */
  maxStates?: number;
}

/** The model document; `doc` is what `export` prints (with or without --json). */
export async function runExport(cfg: ExportConfig) {
  const { model } = await loadFinite(cfg.env, { command: "export", maxStates: cfg.maxStates });
  return { doc: exportModel(model) };
}
