/**
 * Benchmark entry "start-up": wall time of fresh processes, interleaved over the runs, medians:
 * `node -e 0` (the floor), `gapwatch --version` and `gapwatch solve` on a built-in scenario (the
 * built CLI, dist/src/cli/main.js). Targets of the issue: --version at most 3x `node -e 0`; solve under
 * 0.5 s. Reported, never enforced.
 */
import { spawnSync } from "node:child_process";
import { fileURLToPath } from "node:url";
import { median } from "./harness.js";

const now = (): number => Number(process.hrtime.bigint()) / 1e9;

function wall(argv: string[]): number {
  const t = now();
  const r = spawnSync(argv[0], argv.slice(1), { stdio: "ignore" });
  const s = now() - t;
  if (r.status !== 0) throw new Error(`start-up bench: ${argv.join(" ")} exited ${r.status}`);
  return s;
}

export function runStartupBench(opts: { quick: boolean; runs: number }): { lines: string[]; summary: string[] } {
  const cli = fileURLToPath(new URL("../cli/main.js", import.meta.url));
  const cases: [string, string[]][] = [
    ["node -e 0", [process.execPath, "-e", "0"]],
    ["gapwatch --version", [process.execPath, cli, "--version"]],
    ["gapwatch solve --env quench-hall-run --reward light-loss", [process.execPath, cli, "solve", "--env", "quench-hall-run", "--reward", "light-loss"]],
  ];
  const runs = Math.max(3, opts.runs);
  const times = cases.map(() => [] as number[]);
  for (let r = 0; r < runs; r++) cases.forEach(([, argv], i) => times[i].push(wall(argv)));
  const [floor, version, solve] = times.map(median);
  const lines = ["command                                               wall_s  vs node -e 0", ...cases.map(([name], i) => `${name.padEnd(53)} ${median(times[i]).toFixed(3).padStart(7)}  x${(median(times[i]) / floor).toFixed(2)}`)];
  const summary = [
    `start-up: --version ${version.toFixed(3)} s = x${(version / floor).toFixed(2)} node -e 0 (target <= x3: ${version / floor <= 3 ? "met" : "NOT met"}); solve on a built-in ${solve.toFixed(3)} s (target < 0.5 s: ${solve < 0.5 ? "met" : "NOT met"})`,
  ];
  return { lines, summary };
}

export const startupEntry = {
  name: "start-up",
  title: "wall time of gapwatch --version and gapwatch solve on a built-in, next to node -e 0 (fresh processes)",
  run(ctx: { opts: { quick: boolean; runs: number } }): { ok: boolean; summary: string[] } {
    const r = runStartupBench(ctx.opts);
    process.stdout.write(r.lines.join("\n") + "\n\n");
    return { ok: true, summary: r.summary };
  },
};
