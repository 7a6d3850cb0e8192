/** Shared helpers of the batch tests: what a sweep left on disk, run by run. */
import { existsSync, mkdtempSync, readdirSync, readFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";

export function tempDir(label: string): string {
  return mkdtempSync(join(tmpdir(), `gapwatch-${label}-`));
}

/** run id -> { checkpoints.jsonl bytes, final scores } for every run directory under `runsDir`. */
export function runFingerprints(runsDir: string): Map<string, { checkpoints: string; final: unknown; verdict: string }> {
  const out = new Map<string, { checkpoints: string; final: unknown; verdict: string }>();
  for (const name of readdirSync(runsDir).sort()) {
    const dir = join(runsDir, name);
    if (!existsSync(join(dir, "manifest.json"))) continue;
    const summary = JSON.parse(readFileSync(join(dir, "summary.json"), "utf8"));
    out.set(name, { checkpoints: readFileSync(join(dir, "checkpoints.jsonl"), "utf8"), final: summary.final, verdict: summary.verdict });
  }
  return out;
}
