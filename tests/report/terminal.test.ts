/**
 * Terminal output: colour only on a TTY, never with --json, and not when NO_COLOR is set
 * (no-color.org: "when present and not an empty string"); aligned tables; sparklines. ANSI escapes
 * are ECMA-48 control sequences (ESC [ ... final byte); block elements are Unicode U+2581..U+2588.
 */
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { memoryIO, paint, sparkline, table, useColor, visibleWidth } from "../../src/cli/io.js";
import { runCli } from "../../src/cli/program.js";

// ECMA-48 CSI sequence: ESC [ parameter bytes 0x30-0x3F, intermediate 0x20-0x2F, final 0x40-0x7E.
// eslint-disable-next-line no-control-regex
const CSI = /\u001b\[[\x30-\x3f]*[\x20-\x2f]*[\x40-\x7e]/;

async function solve(env: Record<string, string | undefined>, tty: boolean, json = false) {
  const io = memoryIO(env);
  io.stdoutIsTTY = tty;
  io.stderrIsTTY = tty;
  const code = await runCli(["solve", "--env", "fresh-coat-tug", "--reward", "fast", ...(json ? ["--json"] : [])], io);
  return { code, out: io.stdout, err: io.stderr };
}

describe("colour", () => {
  it("a TTY without NO_COLOR gets colour (so the checks below can fail)", async () => {
    const r = await solve({}, true);
    expect(r.code).toBe(0);
    expect(CSI.test(r.out)).toBe(true);
  });

  it("NO_COLOR on a TTY, a non-TTY, and --json on a TTY produce no ANSI escapes", async () => {
    for (const [env, tty, json] of [
      [{ NO_COLOR: "1" }, true, false],
      [{ NO_COLOR: "yes" }, true, false],
      [{}, false, false],
      [{}, true, true],
      [{ TERM: "dumb" }, true, false],
    ] as const) {
      const r = await solve(env, tty, json);
      expect(r.code).toBe(0);
      expect(CSI.test(r.out)).toBe(false);
      expect(CSI.test(r.err)).toBe(false);
      if (json) expect(() => JSON.parse(r.out)).not.toThrow();
    }
  });

  it("an empty NO_COLOR does not disable colour (no-color.org)", () => {
    const io = memoryIO({ NO_COLOR: "" });
    io.stdoutIsTTY = true;
    expect(useColor(io)).toBe(true);
    expect(useColor({ ...io, env: { NO_COLOR: "0" } })).toBe(false);
  });

  it("paint adds SGR codes only when on", () => {
    expect(paint(false, "red", "x")).toBe("x");
    expect(paint(true, "red", "x")).toBe("\u001b[31mx\u001b[39m"); // ECMA-48 SGR 31 / 39
  });
});

describe("table", () => {
  it("aligns columns: text left, numbers right, every line the same visible width, with or without colour", () => {
    const rows: (string | number)[][] = [
      ["default", 0.5, 12],
      ["a-much-longer-name", -1.25, 3],
      ["fast", 100, 45678],
    ];
    for (const color of [false, true]) {
      const lines = table(["variant", "score", "n"], rows, { color }).trimEnd().split("\n");
      expect(lines).toHaveLength(5);
      const widths = lines.map(visibleWidth);
      expect(new Set(widths).size).toBe(1);
      const plain = lines.map((l) => l.replace(new RegExp(CSI.source, "g"), ""));
      // Numbers end in the same column; names start in column 0.
      const ends = plain.slice(2).map((l) => l.indexOf("  ", 0));
      expect(plain[2].startsWith("default ")).toBe(true);
      expect(plain.slice(2).map((l) => l.trimEnd().length)).toEqual([widths[0], widths[0], widths[0]]);
      expect(ends.every((e) => e > 0)).toBe(true);
      expect(plain[2]).toMatch(/ 0\.5000 +12$/);
      expect(plain[3]).toMatch(/-1\.2500 +3$/);
    }
  });

  it("property: every line of any table has the same visible width", () => {
    fc.assert(
      fc.property(
        fc.array(fc.tuple(fc.string({ maxLength: 12 }).filter((s) => !/[\n\r\u001b]/.test(s)), fc.integer({ min: -1e6, max: 1e6 })), { minLength: 1, maxLength: 8 }),
        (rows) => {
          const lines = table(["name", "value"], rows).trimEnd().split("\n");
          expect(new Set(lines.map(visibleWidth)).size).toBe(1);
        },
      ),
    );
  });
});

describe("sparkline", () => {
  it("maps min..max onto the eight block elements U+2581..U+2588", () => {
    expect(sparkline([1, 2, 3, 4, 5, 6, 7, 8])).toBe("▁▂▃▄▅▆▇█");
    expect(sparkline([0, 1], [0, 2])).toBe("▁▅");
    expect(sparkline([])).toBe("");
  });
});
