/**
 * Where the shared fixture folder is: $GAPWATCH_SHARED if set, else `<repo>/../shared` (CI clones the
 * repo with shared/ beside it), else /work/shared (the development machine, where worktrees live one
 * level deeper).
 */
import { existsSync } from "node:fs";
import { dirname, join, resolve } from "node:path";
import { fileURLToPath } from "node:url";

const REPO = resolve(dirname(fileURLToPath(import.meta.url)), "..", "..");

export function sharedDir(): string {
  const env = process.env.GAPWATCH_SHARED;
  if (env !== undefined && env !== "") return resolve(env);
  const beside = join(REPO, "..", "shared");
  if (existsSync(beside)) return beside;
  return "/work/shared";
}

/** A file under shared/fixtures/training-logs/. */
export function trainingLog(name: string): string {
  return join(sharedDir(), "fixtures", "training-logs", name);
}
