/**
 * Output for the CLI: stdout carries results (one JSON document with --json, else text); stderr carries
 * errors, progress and logs. Colour only on a TTY, never with --json, and never when NO_COLOR is set.
 * Everything is redirectable so the whole CLI can be tested in-process.
 */
import { jsonWithoutDirectionControls, terminalText } from "../errors.js";

export interface CliIO {
  out(text: string): void;
  err(text: string): void;
  /** Whether stdout / stderr are terminals (progress bars go to a TTY stderr only). */
  stdoutIsTTY: boolean;
  stderrIsTTY: boolean;
  env: Record<string, string | undefined>;
  cwd: string;
  /** The script node ran (process.argv[1]), for printing commands that work as printed. */
  script?: string;
}

export function processIO(): CliIO {
  return {
    out: (t) => void process.stdout.write(t),
    err: (t) => void process.stderr.write(t),
    stdoutIsTTY: Boolean(process.stdout.isTTY),
    stderrIsTTY: Boolean(process.stderr.isTTY),
    env: process.env,
    cwd: process.cwd(),
    script: process.argv[1],
  };
}

/** An IO that records everything, for tests. */
export function memoryIO(env: Record<string, string | undefined> = {}): CliIO & { stdout: string; stderr: string } {
  const io = {
    stdout: "",
    stderr: "",
    out(t: string) {
      io.stdout += t;
    },
    err(t: string) {
      io.stderr += t;
    },
    stdoutIsTTY: false,
    stderrIsTTY: false,
    env,
    cwd: process.cwd(),
  };
  return io;
}

/** Colour only on a TTY, never with --json, not when NO_COLOR is set to a non-empty value (no-color.org), not on TERM=dumb. */
export function useColor(io: CliIO, json = false): boolean {
  const noColor = io.env.NO_COLOR !== undefined && io.env.NO_COLOR !== "";
  return !json && io.stdoutIsTTY && !noColor && io.env.TERM !== "dumb";
}

const CODES = { bold: [1, 22], dim: [2, 22], red: [31, 39], green: [32, 39], yellow: [33, 39], blue: [34, 39], magenta: [35, 39], cyan: [36, 39] } as const;
export type Style = keyof typeof CODES;

export function paint(on: boolean, style: Style, text: string): string {
  if (!on) return text;
  const [a, b] = CODES[style];
  return `\u001b[${a}m${text}\u001b[${b}m`;
}

/** Visible width of a string (ignores ANSI escapes). */
export function visibleWidth(s: string): number {
  // eslint-disable-next-line no-control-regex
  return [...s.replace(/\u001b\[[0-9;]*m/g, "")].length;
}

/** Aligned table: numbers right-aligned, text left-aligned. Pure. */
export function table(headers: string[], rows: (string | number)[][], opts: { color?: boolean } = {}): string {
  const cells = rows.map((r) => r.map((c) => (typeof c === "number" ? formatNumber(c) : c)));
  const numeric = headers.map((_, i) => rows.length > 0 && rows.every((r) => typeof r[i] === "number" || r[i] === "-"));
  const widths = headers.map((h, i) => Math.max(visibleWidth(h), ...cells.map((r) => visibleWidth(r[i] ?? ""))));
  const pad = (s: string, i: number) => {
    const gap = " ".repeat(widths[i] - visibleWidth(s));
    return numeric[i] ? gap + s : s + gap;
  };
  const head = headers.map((h, i) => pad(paint(opts.color ?? false, "bold", h), i)).join("  ");
  const rule = widths.map((w) => "-".repeat(w)).join("  ");
  return [head, rule, ...cells.map((r) => r.map((c, i) => pad(c ?? "", i)).join("  "))].join("\n") + "\n";
}

export function formatNumber(x: number, digits = 4): string {
  if (!Number.isFinite(x)) return String(x);
  if (Number.isInteger(x) && Math.abs(x) < 1e9) return String(x);
  const a = Math.abs(x);
  if (a !== 0 && (a < 1e-3 || a >= 1e6)) return x.toExponential(2);
  return x.toFixed(digits);
}

export { sparkline } from "../report/terminal.js";

/**
 * Print the result of a command: JSON document or human text. Names from users' files reach both: the
 * human text has control and direction characters replaced (`terminalText`), the JSON has direction
 * controls as \u escapes (the same data).
 */
export function emit(io: CliIO, json: boolean, doc: unknown, human: () => string): void {
  if (json) io.out(jsonWithoutDirectionControls(JSON.stringify(doc, (_k, v) => (ArrayBuffer.isView(v) ? Array.from(v as unknown as ArrayLike<number>) : v))) + "\n");
  else io.out(terminalText(human()));
}

/** The caution every human-readable result ends with. */
export const CAUTION =
  "A clean result is evidence, not certification: it covers this environment, reward, learner, seed and budget only. For safety-relevant uses follow your domain's safety standards and licensed practice.";
