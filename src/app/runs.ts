/** `gapwatch runs`: the runs and comparisons recorded in `<runs-dir>/index.db`. */
import { openIndex, openIndexForReading, type RunIndex } from "../store/index-db.js";

export interface RunsConfig {
  runsDir: string;
  env?: string;
  reward?: string;
  learner?: string;
  verdict?: string;
  /** Rebuild the index from the run directories first. */
  rebuild?: boolean;
}

/**
 * List; `doc` is what `runs --json` prints. Listing creates nothing (a missing runs folder is an input
 * error; a folder without index.db is read into a throw-away index, `persisted: false`); `rebuild`, an
 * explicit write, may create the index file.
 */
export function listRuns(cfg: RunsConfig) {
  let rebuilt: ReturnType<RunIndex["rebuild"]> | undefined;
  const { index: ix, persisted } = cfg.rebuild ? { index: openIndex(cfg.runsDir), persisted: true } : openIndexForReading(cfg.runsDir);
  try {
    if (cfg.rebuild) rebuilt = ix.rebuild();
    const runs = ix.listRuns({ env: cfg.env, reward: cfg.reward, learner: cfg.learner, verdict: cfg.verdict });
    const comparisons = cfg.reward || cfg.verdict || cfg.learner ? [] : ix.listComparisons({ env: cfg.env });
    return { runs, comparisons, rebuilt, persisted, doc: { index: ix.file, runs, comparisons, ...(rebuilt ? { rebuilt } : {}) } };
  } finally {
    ix.close();
  }
}
