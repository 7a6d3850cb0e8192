/** Temporary folders for one test file, removed after all of its tests. Call at module level. */
import { rmSync } from "node:fs";
import { afterAll } from "vitest";
import { tempDir } from "../batch/helpers.js";

/** A maker of fresh folders `gapwatch-<label>-XXXXXX` under the OS temp dir; every one is removed after all tests. */
export function tempDirsRemovedAfterAll(): (label: string) => string {
  const dirs: string[] = [];
  afterAll(() => {
    for (const d of dirs) rmSync(d, { recursive: true, force: true });
  });
  return (label) => {
    const d = tempDir(label);
    dirs.push(d);
    return d;
  };
}

/** One fresh folder `gapwatch-<label>-XXXXXX`, made now and removed after all tests. */
export function tempDirRemovedAfterAll(label: string): string {
  return tempDirsRemovedAfterAll()(label);
}
