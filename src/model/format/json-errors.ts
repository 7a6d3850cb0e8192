/**
 * Error location for the interchange formats: JSON paths, near-miss suggestions, and line/column of
 * JSON syntax errors. Every failure is an `InputError` (exit 2) named "<file> <JSON path>".
 */
import { InputError } from "../../errors.js";

export type Path = readonly (string | number)[];
export type Namespace = "model" | "reward";

// ---------------------------------------------------------------------------------------------------
// Small pure helpers

const IDENT = /^[A-Za-z_$][A-Za-z0-9_$]*$/;

/** A JSON path in the `$.a.b[3]["odd key"]` notation. */
export function jsonPath(path: Path): string {
  let out = "$";
  for (const seg of path) {
    if (typeof seg === "number") out += `[${seg}]`;
    else if (IDENT.test(seg)) out += `.${seg}`;
    else out += `[${JSON.stringify(seg)}]`;
  }
  return out;
}

/** Edit distance counting an adjacent transposition as one edit (optimal string alignment). */
function editDistance(a: string, b: string): number {
  const m = a.length;
  const n = b.length;
  const d: number[][] = Array.from({ length: m + 1 }, (_, i) => Array.from({ length: n + 1 }, (_, j) => (i === 0 ? j : j === 0 ? i : 0)));
  for (let i = 1; i <= m; i++) {
    for (let j = 1; j <= n; j++) {
      d[i][j] = Math.min(d[i - 1][j] + 1, d[i][j - 1] + 1, d[i - 1][j - 1] + (a[i - 1] === b[j - 1] ? 0 : 1));
      if (i > 1 && j > 1 && a[i - 1] === b[j - 2] && a[i - 2] === b[j - 1]) d[i][j] = Math.min(d[i][j], d[i - 2][j - 2] + 1);
    }
  }
  return d[m][n];
}

/** Longest word (and candidate) `didYouMean` compares. */
export const MAX_SUGGEST_LENGTH = 64;

/**
 * The closest candidate to `word` when it is a near miss: same up to case, a few edits away (about one
 * per three characters), or else the longest candidate that `word` starts with ("prob" -> "p").
 */
export function didYouMean(word: string, candidates: readonly string[]): string | undefined {
  // Suggestions are for near misses of short names: a long word is no near miss, and the edit
  // distance costs length x length, so long inputs are not compared at all.
  if (word.length > MAX_SUGGEST_LENGTH) return undefined;
  let best: string | undefined;
  let bestD = Infinity;
  const w = word.toLowerCase();
  for (const c of candidates) {
    if (c.length > MAX_SUGGEST_LENGTH) continue;
    const d = editDistance(w, c.toLowerCase());
    if (d < bestD) {
      bestD = d;
      best = c;
    }
  }
  const limit = Math.max(1, Math.min(3, Math.floor(word.length / 3)));
  if (best !== undefined && bestD <= limit) return best;
  let prefix: string | undefined;
  for (const c of candidates) if (c.length > 0 && w.startsWith(c.toLowerCase()) && (prefix === undefined || c.length > prefix.length)) prefix = c;
  return prefix;
}

export function hint(word: string, candidates: readonly string[]): string {
  const s = didYouMean(word, candidates);
  return s === undefined ? "" : ` (did you mean ${JSON.stringify(s)}?)`;
}

export function describe(v: unknown): string {
  if (v === undefined) return "nothing";
  if (v === null) return "null";
  if (Array.isArray(v)) return "an array";
  if (typeof v === "string") return `the string ${clip(JSON.stringify(v))}`;
  if (typeof v === "number") return `the number ${v}`;
  if (typeof v === "object") return "an object";
  return `${typeof v} ${String(v)}`;
}

export function clip(s: string, n = 40): string {
  return s.length > n ? `${s.slice(0, n - 1)}…` : s;
}

export function lookup(data: unknown, path: Path): unknown {
  let cur = data;
  for (const seg of path) {
    if (cur === null || typeof cur !== "object") return undefined;
    cur = (cur as Record<string | number, unknown>)[seg];
  }
  return cur;
}

export function fail(ns: Namespace, code: string, where: string, path: Path, message: string): never {
  throw new InputError(`${ns}.${code}`, message.replace(/\s*\n\s*/g, " "), `${where} ${jsonPath(path)}`);
}

// ---------------------------------------------------------------------------------------------------
// JSON text -> value, with line and column on syntax errors

interface Located {
  pos: number;
  msg: string;
}

/** Find the first JSON syntax error in `text` (null if the text is valid JSON). Pure. */
export function locateJsonError(text: string): Located | null {
  let i = 0;
  const n = text.length;
  const err = (msg: string, pos = i): never => {
    throw { pos, msg } satisfies Located;
  };
  const ws = () => {
    while (i < n) {
      const c = text.charCodeAt(i);
      if (c === 32 || c === 9 || c === 10 || c === 13) i++;
      else break;
    }
  };
  const peek = () => (i < n ? text[i] : "end of input");
  const str = () => {
    const start = i;
    i++; // opening quote
    while (i < n) {
      const c = text[i];
      if (c === '"') {
        i++;
        return;
      }
      if (c === "\\") {
        const e = text[i + 1];
        if (e === "u") {
          if (!/^[0-9a-fA-F]{4}$/.test(text.slice(i + 2, i + 6))) err("invalid \\u escape: expected four hex digits");
          i += 6;
        } else if (e !== undefined && '"\\/bfnrt'.includes(e)) i += 2;
        else err(`invalid escape "\\${e ?? ""}" in a string`);
        continue;
      }
      if (text.charCodeAt(i) < 0x20) err("raw control character (e.g. a line break) inside a string; write it as an escape like \\n");
      i++;
    }
    err("unterminated string", start);
  };
  const num = () => {
    const m = /^-?(0|[1-9][0-9]*)(\.[0-9]+)?([eE][+-]?[0-9]+)?/.exec(text.slice(i, i + 400));
    if (!m || m[0] === "-" || m[0].length === 0) err(`invalid number`);
    i += m![0].length;
    if (i < n && /[0-9.eE+\-A-Za-z]/.test(text[i])) err(`invalid number`, i);
  };
  const value = (depth: number): void => {
    if (depth > 512) err("nesting too deep");
    ws();
    const c = text[i];
    if (c === "{") {
      i++;
      ws();
      if (text[i] === "}") {
        i++;
        return;
      }
      let comma = -1;
      for (;;) {
        ws();
        if (text[i] !== '"') {
          if (text[i] === "}" && comma >= 0) err("trailing comma before '}'; remove it", comma);
          err(`expected a property name in double quotes, found ${show(peek())}`);
        }
        str();
        ws();
        if (text[i] !== ":") err(`expected ':' after a property name, found ${show(peek())}`);
        i++;
        value(depth + 1);
        ws();
        if (text[i] === ",") {
          comma = i++;
          continue;
        }
        if (text[i] === "}") {
          i++;
          return;
        }
        err(`expected ',' or '}' after a property value, found ${show(peek())}${text[i] === '"' ? " (a missing comma?)" : ""}`);
      }
    }
    if (c === "[") {
      i++;
      ws();
      if (text[i] === "]") {
        i++;
        return;
      }
      let comma = -1;
      for (;;) {
        ws();
        if (text[i] === "]" && comma >= 0) err("trailing comma before ']'; remove it", comma);
        value(depth + 1);
        ws();
        if (text[i] === ",") {
          comma = i++;
          continue;
        }
        if (text[i] === "]") {
          i++;
          return;
        }
        err(`expected ',' or ']' after an array element, found ${show(peek())}${text[i] === '"' || text[i] === "{" || text[i] === "[" ? " (a missing comma?)" : ""}`);
      }
    }
    if (c === '"') return str();
    if (c === "-" || (c >= "0" && c <= "9")) return num();
    for (const lit of ["true", "false", "null"]) {
      if (text.startsWith(lit, i)) {
        i += lit.length;
        return;
      }
    }
    if (/^(NaN|-?Infinity)/.test(text.slice(i))) err("NaN and Infinity are not JSON; write a finite number");
    if (c === "'") err("strings must use double quotes");
    err(`expected a value, found ${show(peek())}`);
  };
  try {
    value(0);
    ws();
    if (i < n) err(`unexpected ${show(peek())} after the end of the JSON value`);
    return null;
  } catch (e) {
    if (e && typeof e === "object" && "pos" in e) return e as Located;
    throw e;
  }
}

function show(c: string): string {
  if (c === "end of input") return c;
  const printable = c === "\n" ? "\\n" : c === "\r" ? "\\r" : c === "\t" ? "\\t" : c;
  return `'${printable}'`;
}

/** Line and column (both 1-based) of a character offset. */
export function lineColumn(text: string, pos: number): { line: number; column: number } {
  let line = 1;
  let lineStart = 0;
  for (let k = 0; k < pos && k < text.length; k++) {
    if (text.charCodeAt(k) === 10) {
      line++;
      lineStart = k + 1;
    }
  }
  return { line, column: pos - lineStart + 1 };
}

export function parseJsonText(text: string, where: string, ns: Namespace): unknown {
  const body = text.charCodeAt(0) === 0xfeff ? text.slice(1) : text;
  let data: unknown;
  try {
    data = JSON.parse(body);
  } catch (e) {
    const loc = locateJsonError(body) ?? { pos: body.length, msg: (e as Error).message };
    const { line, column } = lineColumn(body, loc.pos);
    throw new InputError(`${ns}.json`, `invalid JSON at line ${line}, column ${column}: ${loc.msg}; fix the syntax there`, `${where}:${line}:${column}`);
  }
  // Only a text holding the word (or a \u escape that could spell it) can hold the key: skip the walk otherwise.
  if (body.includes("__proto__") || body.includes("\\u")) {
    const path = findKey(data, RESERVED_KEY);
    if (path) fail(ns, "reservedName", where, path, `the name "${RESERVED_KEY}" is reserved; rename this key`);
  }
  return data;
}

/** A name that may not be used for anything a file names (it would reach an object's prototype). */
export const RESERVED_KEY = "__proto__";

/**
 * JSON path of the first own key `key` in a parsed JSON value (iterative: no stack limit), or null.
 * Each visited container keeps a link to its parent, so deep nesting costs linear time (the path is
 * built only for the hit).
 */
function findKey(root: unknown, key: string): Path | null {
  interface Node {
    v: unknown;
    parent: Node | null;
    seg: string | number;
  }
  const pathOf = (n: Node, last: string): Path => {
    const out: (string | number)[] = [last];
    for (let m: Node | null = n; m && m.parent; m = m.parent) out.push(m.seg);
    return out.reverse();
  };
  const stack: Node[] = [{ v: root, parent: null, seg: "" }];
  while (stack.length > 0) {
    const node = stack.pop()!;
    const v = node.v;
    if (v === null || typeof v !== "object") continue;
    if (Array.isArray(v)) {
      for (let i = v.length - 1; i >= 0; i--) if (v[i] !== null && typeof v[i] === "object") stack.push({ v: v[i], parent: node, seg: i });
      continue;
    }
    if (Object.hasOwn(v, key)) return pathOf(node, key);
    for (const [k, x] of Object.entries(v)) if (x !== null && typeof x === "object") stack.push({ v: x, parent: node, seg: k });
  }
  return null;
}
