/**
 * Typed errors. Every expected failure carries a namespaced code (`"model.probabilitySum"`), a message
 * that says what was expected, what was found and where, and maps to a process exit code through
 * one table. The CLI prints `error [code]: message` on one line and exits with that code.
 */

/** Exit codes shared by every command. */
export const EXIT = {
  ok: 0,
  internal: 1,
  badInput: 2,
  /** A gate fired: an alert (`--fail-on-alert`), a finding (`--fail-on`), a failed property (`check`). */
  gate: 3,
  interrupted: 130,
} as const;

/** Code prefixes that mean "the user's input is wrong" (exit 2). Anything else is internal (exit 1). */
const BAD_INPUT_PREFIXES = [
  "input.",
  "model.",
  "reward.",
  "env.",
  "config.",
  "grid.",
  "track.",
  "module.",
  "queue.",
  "store.",
  "cli.",
  "ingest.",
  "drn.",
];

export class GapwatchError extends Error {
  readonly code: string;
  /** Where the problem is: a file, a JSON path, a line. Printed before the message. */
  readonly where?: string;
  readonly exitCode: number;

  constructor(code: string, message: string, opts: { where?: string; exitCode?: number; cause?: unknown } = {}) {
    super(message, opts.cause === undefined ? undefined : { cause: opts.cause });
    this.name = "GapwatchError";
    this.code = code;
    this.where = opts.where;
    this.exitCode = opts.exitCode ?? exitCodeFor(code);
  }
}

/** Bad user input: exit code 2. */
export class InputError extends GapwatchError {
  constructor(code: string, message: string, where?: string) {
    super(code, message, { where, exitCode: EXIT.badInput });
    this.name = "InputError";
  }
}

export function exitCodeFor(code: string): number {
  return BAD_INPUT_PREFIXES.some((p) => code.startsWith(p)) ? EXIT.badInput : EXIT.internal;
}

/** Longest error line printed (characters); a longer one is cut with an ellipsis. */
export const MAX_ERROR_LINE = 500;

// C0/C1 control characters (ESC starts terminal escape codes) and Unicode bidirectional controls.
// eslint-disable-next-line no-control-regex
const UNPRINTABLE = /[\u0000-\u0008\u000b-\u001f\u007f-\u009f\u061c\u200e\u200f\u202a-\u202e\u2066-\u2069]/g;

/** A line safe for a terminal: line breaks folded to spaces, control and bidi characters replaced by "?", at most `max` characters. Pure. */
export function printableLine(text: string, max = MAX_ERROR_LINE): string {
  const head = text.length > max * 4 ? text.slice(0, max * 4) : text;
  const line = head.replace(/\s*[\n\r\u2028\u2029]\s*/g, " ").replace(UNPRINTABLE, "?");
  return line.length > max ? `${line.slice(0, max - 1)}…` : line;
}

// Our own styling codes (SGR, e.g. ESC[1m ... ESC[22m) are the only escape sequences kept in printed text.
// eslint-disable-next-line no-control-regex
const SGR_OR_UNPRINTABLE = /\u001b\[[0-9;]{0,12}m|[\u0000-\u0008\u000b-\u001f\u007f-\u009f\u061c\u200e\u200f\u202a-\u202e\u2066-\u2069]/g;

/**
 * Text safe for a terminal, line breaks and tabs kept: every control character (ESC of a cursor or
 * title sequence, carriage return, backspace, bell) and every Unicode direction control becomes "?";
 * only colour/bold codes (ESC [ digits m) stay. For human output that carries names from users' files
 * (features, actions, variants, tags). Pure.
 */
export function terminalText(text: string): string {
  return text.replace(SGR_OR_UNPRINTABLE, (m) => (m.length > 1 ? m : "?"));
}

const DIRECTION_CONTROLS = /[\u061c\u200e\u200f\u202a-\u202e\u2066-\u2069\u2028\u2029]/g;

/** JSON text with Unicode direction controls and line separators written as \u escapes: the same data, nothing reordered on a terminal. Pure. */
export function jsonWithoutDirectionControls(json: string): string {
  return json.replace(DIRECTION_CONTROLS, (c) => `\\u${c.charCodeAt(0).toString(16).padStart(4, "0")}`);
}

/** One line for a terminal: `error [model.probabilitySum] file.json $.transitions[3]: ...`. Pure. */
export function formatError(err: unknown): string {
  if (err instanceof GapwatchError) {
    const where = err.where ? ` ${err.where}:` : "";
    return printableLine(`error [${err.code}]${where} ${err.message}`);
  }
  const msg = err instanceof Error ? err.message : String(err);
  return printableLine(`internal error: ${msg}`);
}
