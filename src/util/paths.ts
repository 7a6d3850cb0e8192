import { existsSync, readFileSync } from "node:fs";
import { dirname, join } from "node:path";
import { fileURLToPath } from "node:url";

/** The package root (the folder with package.json), from both `src/` (tests) and `dist/src/` (built). */
export function packageRoot(): string {
  let dir = dirname(fileURLToPath(import.meta.url));
  for (let i = 0; i < 6; i++) {
    if (existsSync(join(dir, "package.json")) && existsSync(join(dir, "envs"))) return dir;
    dir = dirname(dir);
  }
  throw new Error("cannot find the gapwatch package root (package.json next to envs/)");
}

export function envsDir(): string {
  return join(packageRoot(), "envs");
}

export function packageVersion(): string {
  return (JSON.parse(readFileSync(join(packageRoot(), "package.json"), "utf8")) as { version: string }).version;
}
