// A simulator module outside the package folder that does `import { defineEnv } from "gapwatch"` (as the
// README shows) must load: the loader resolves the bare specifier to the running package, from source
// (in-process, vitest) and from the build (the CLI spawned from dist/). Before the fix both failed with
// "Cannot find module 'gapwatch'".
import { spawnSync, execSync } from "node:child_process";
import { copyFileSync, existsSync, mkdtempSync, rmSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join, resolve } from "node:path";
import { afterAll, beforeAll, describe, expect, test } from "vitest";
import { loadSimulator } from "../../src/sim/load.js";

const REPO = resolve(__dirname, "../..");
const MAIN = join(REPO, "dist/src/cli/main.js");
let dir = "";

// A plain-JavaScript module of our own (a two-cell walk), also importing from "gapwatch".
const WALK_JS = `import { defineEnv } from "gapwatch";
export default defineEnv({
  name: "two-cell-walk",
  actions: ["stay", "step"],
  features: ["moved"],
  horizon: 6,
  reset: () => ({ at: 0 }),
  step: (s, a, rng) => {
    if (a !== 0 && a !== 1) throw new Error("invalid action " + a);
    return { state: { at: Math.min(2, s.at + a) }, features: { moved: a }, intent: s.at + a === 2 ? 1 : 0, terminated: s.at + a >= 2 && rng.float() >= 0 };
  },
  rewards: { moves: { weights: { moved: 1 } } },
});
`;

beforeAll(() => {
  dir = mkdtempSync(join(tmpdir(), "gapwatch-module-"));
  copyFileSync(join(REPO, "examples/pump-station.ts"), join(dir, "pump-station.ts"));
  writeFileSync(join(dir, "walk.mjs"), WALK_JS);
  if (!existsSync(MAIN)) execSync("npx tsc -p tsconfig.json", { cwd: REPO, stdio: "ignore" });
});
afterAll(() => {
  if (dir) rmSync(dir, { recursive: true, force: true });
});

describe("bare import of gapwatch from a module outside the package", () => {
  test("in-process (from source): .ts and .mjs modules load and compile", async () => {
    const ts = await loadSimulator(join(dir, "pump-station.ts"));
    expect(ts.simulator.def.name).toBe("pump-station");
    expect(ts.model?.nStates).toBeGreaterThan(1);
    const js = await loadSimulator(join(dir, "walk.mjs"));
    expect(js.simulator.def.name).toBe("two-cell-walk");
    // 3 positions (0, 1, 2): the walk's reachable states, counted by hand.
    expect(js.model?.nStates).toBe(3);
  }, 60_000);

  test("built CLI: check and train on the copied example", () => {
    const run = (args: string[]) => spawnSync(process.execPath, [MAIN, ...args], { cwd: dir, encoding: "utf8", timeout: 60_000 });
    const check = run(["check", "--env", join(dir, "pump-station.ts"), "--json"]);
    expect(check.stderr).not.toMatch(/Cannot find module/);
    expect(check.status).toBe(0);
    const train = run(["train", "--env", join(dir, "pump-station.ts"), "--steps", "2000", "--checkpoints", "4", "--runs-dir", join(dir, "runs"), "--json"]);
    expect(train.stderr).not.toMatch(/Cannot find module/);
    expect(train.status === 0 || train.status === 3).toBe(true);
    expect(JSON.parse(train.stdout).status).toBe("complete");
    const js = run(["check", "--env", join(dir, "walk.mjs"), "--json"]);
    expect(js.status).toBe(0);
  }, 120_000);
});
