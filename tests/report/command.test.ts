/**
 * `gapwatch report` in-process: writes <dir>/report.html or --out, prints the path (or one JSON
 * document with --json), and bad input is one line naming the folder with exit code 2.
 */
import { existsSync, mkdirSync, mkdtempSync, readFileSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { afterAll, describe, expect, it } from "vitest";
import { memoryIO } from "../../src/cli/io.js";
import { runCli } from "../../src/cli/program.js";
import { runTraining } from "../../src/train/run.js";

const tmp = mkdtempSync(join(tmpdir(), "gapwatch-report-cli-"));
afterAll(() => rmSync(tmp, { recursive: true, force: true }));

describe("gapwatch report", () => {
  it("writes the report of a run directory and prints its path; --out and --json", async () => {
    const run = await runTraining({ env: "seed-vault-courier", reward: "per-scan", steps: 20_000, seed: 1 }, { runsDir: join(tmp, "runs") });
    const io = memoryIO();
    expect(await runCli(["report", run.runDir], io)).toBe(0);
    const file = join(run.runDir, "report.html");
    expect(io.stdout).toContain(file);
    const html = readFileSync(file, "utf8");
    expect(html.startsWith("<!doctype html>")).toBe(true);
    expect(html).toContain(`data-verdict="${run.verdict}"`);
    // Self-contained: no external script, stylesheet or image reference.
    expect(html).not.toMatch(/<(script|link|img)[^>]+(src|href)=/i);

    const io2 = memoryIO();
    const out = join(tmp, "elsewhere.html");
    expect(await runCli(["report", run.runDir, "--out", out, "--json"], io2)).toBe(0);
    expect(JSON.parse(io2.stdout)).toEqual({ report: out, opened: false });
    expect(existsSync(out)).toBe(true);

    // --open with no opener on PATH (an empty folder): one line on stderr with the file, exit 0,
    // also with --json (whose stdout stays the one document).
    const noPath = join(tmp, "no-openers");
    mkdirSync(noPath);
    for (const json of [[], ["--json"]]) {
      const io3 = memoryIO({ PATH: noPath });
      expect(await runCli(["report", run.runDir, "--out", out, "--open", ...json], io3)).toBe(0);
      expect(io3.stderr.trim().split("\n")).toHaveLength(1);
      expect(io3.stderr).toContain(`no opener found on PATH (xdg-open, open); the report is at ${out}`);
      if (json.length) expect(JSON.parse(io3.stdout)).toEqual({ report: out, opened: false });
    }
  });

  it("a folder that is neither a run nor a comparison is bad input (exit 2, one line)", async () => {
    const empty = join(tmp, "empty");
    mkdirSync(empty);
    for (const dir of [empty, join(tmp, "missing")]) {
      const io = memoryIO();
      expect(await runCli(["report", dir], io)).toBe(2);
      expect(io.stderr.trim().split("\n")).toHaveLength(1);
      expect(io.stderr).toContain(dir);
    }
  });
});
