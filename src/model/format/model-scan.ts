/**
 * Byte-level fast path for model files (gapwatch-mdp/1): walk the UTF-8 bytes once to find the
 * top-level keys, then walk `transitions` a second time straight into the typed arrays of the model,
 * without a string of the whole file and without one object per outcome.
 *
 * The scanner is an acceptor, not a judge: it gives up (returns null) at the first thing it does not
 * expect (a syntax error, a key it does not know, a duplicate key, a number it cannot place, an
 * escape in a key, ...). The caller then runs the ordinary path (JSON.parse, schema, semantic checks),
 * which either accepts the file after all or reports the error with its file, JSON path, line and
 * column. So every message stays the ordinary path's; the scanner only has to be right on what it
 * accepts (tests/model/model-scan.test.ts compares both paths on valid and on mutated files).
 */

/** Where each top-level value lies in the bytes, and how many outcome objects `transitions` holds. */
export interface TopLevel {
  /** Key -> [start, end) byte range of its value. */
  spans: Map<string, [number, number]>;
  /** Objects at the depth of an entry and of an outcome in `transitions` (exact for a valid file). */
  entries: number;
  outcomes: number;
}

const QUOTE = 0x22;
const BACKSLASH = 0x5c;
const COMMA = 0x2c;
const COLON = 0x3a;
const LBRACE = 0x7b;
const RBRACE = 0x7d;
const LBRACK = 0x5b;
const RBRACK = 0x5d;
const MINUS = 0x2d;
const PLUS = 0x2b;
const DOT = 0x2e;
const ZERO = 0x30;
const NINE = 0x39;

const isWs = (c: number): boolean => c === 0x20 || c === 0x0a || c === 0x0d || c === 0x09;

function ws(b: Uint8Array, i: number): number {
  while (i < b.length && isWs(b[i])) i++;
  return i;
}

/** End (after the closing quote) of the string starting at `i`, or -1. */
function skipString(b: Uint8Array, i: number): number {
  const n = b.length;
  for (i++; i < n; i++) {
    const c = b[i];
    if (c === QUOTE) return i + 1;
    if (c === BACKSLASH) i++;
  }
  return -1;
}

let countedEntries = 0;
let countedOutcomes = 0;

/**
 * End of the value starting at `i` (brackets balanced, strings skipped; the syntax of what lies in
 * between is checked later, by JSON.parse or by the strict walk), or -1. Counts objects opened at
 * depth 2 (entries) and 4 (outcomes) relative to the value.
 */
function skipValue(b: Uint8Array, i: number): number {
  const n = b.length;
  const c0 = b[i];
  if (c0 === QUOTE) return skipString(b, i);
  if (c0 !== LBRACE && c0 !== LBRACK) {
    while (i < n) {
      const c = b[i];
      if (c === COMMA || c === RBRACE || c === RBRACK || isWs(c)) break;
      i++;
    }
    return i;
  }
  let depth = 0;
  let entries = 0;
  let outcomes = 0;
  while (i < n) {
    const c = b[i];
    if (c === QUOTE) {
      i = skipString(b, i);
      if (i < 0) return -1;
      continue;
    }
    if (c === LBRACE || c === LBRACK) {
      depth++;
      if (c === LBRACE) {
        if (depth === 2) entries++;
        else if (depth === 4) outcomes++;
      }
    } else if (c === RBRACE || c === RBRACK) {
      depth--;
      if (depth === 0) {
        countedEntries = entries;
        countedOutcomes = outcomes;
        return i + 1;
      }
    }
    i++;
  }
  return -1;
}

function hasEscapeOrControl(b: Uint8Array, from: number, to: number): boolean {
  for (let k = from; k < to; k++) if (b[k] === BACKSLASH || b[k] < 0x20) return true;
  return false;
}

/** Top-level keys of the one JSON object in `b` (a leading byte-order mark is skipped), or null. */
export function scanTopLevel(b: Uint8Array): TopLevel | null {
  const n = b.length;
  let i = b[0] === 0xef && b[1] === 0xbb && b[2] === 0xbf ? 3 : 0;
  i = ws(b, i);
  if (b[i] !== LBRACE) return null;
  i = ws(b, i + 1);
  const spans = new Map<string, [number, number]>();
  let entries = 0;
  let outcomes = 0;
  for (;;) {
    if (b[i] !== QUOTE) return null;
    const kEnd = skipString(b, i);
    if (kEnd < 0 || hasEscapeOrControl(b, i + 1, kEnd - 1)) return null;
    const key = Buffer.from(b.buffer, b.byteOffset + i + 1, kEnd - i - 2).toString("utf8");
    if (spans.has(key)) return null;
    i = ws(b, kEnd);
    if (b[i] !== COLON) return null;
    i = ws(b, i + 1);
    const vEnd = skipValue(b, i);
    if (vEnd < 0 || vEnd === i) return null;
    if (key === "transitions") {
      entries = countedEntries;
      outcomes = countedOutcomes;
    }
    spans.set(key, [i, vEnd]);
    i = ws(b, vEnd);
    if (b[i] === COMMA) {
      i = ws(b, i + 1);
      continue;
    }
    if (b[i] !== RBRACE) return null;
    break;
  }
  if (ws(b, i + 1) !== n) return null;
  return { spans, entries, outcomes };
}

// ---------------------------------------------------------------------------------------------------
// The strict walk over `transitions`

/** What the walk needs to know of the header. */
export interface ScanShape {
  nS: number;
  nA: number;
  /** Declared feature names, in column order. */
  features: readonly string[];
}

/** The entries of `transitions` in file order; outcome `o` of entry `e` is `outStart[e] + j`. */
export interface ScannedTransitions {
  count: number;
  state: Int32Array;
  action: Int32Array;
  outStart: Int32Array;
  /** Outcomes in file order (dense features, `features.length` per outcome). */
  next: Int32Array;
  prob: Float64Array;
  featureValues: Float64Array;
  intent: Float64Array;
}

const POW10 = [1, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22];

const bytesOf = (s: string): Uint8Array => new Uint8Array(Buffer.from(s, "utf8"));
const K_STATE = bytesOf("state");
const K_ACTION = bytesOf("action");
const K_OUTCOMES = bytesOf("outcomes");
const K_NEXT = bytesOf("next");
const K_P = bytesOf("p");
const K_FEATURES = bytesOf("features");
const K_INTENT = bytesOf("intent");

/** Thrown inside the walk to give up; caught by `scanTransitions`. */
class GiveUp {}
const GIVE_UP = new GiveUp();

/**
 * Walk the `transitions` value in `b[from, to)` with room for `entries` entries and `outcomes`
 * outcomes. Null when anything is unexpected (the caller then takes the ordinary path).
 */
export function scanTransitions(b: Uint8Array, from: number, to: number, shape: ScanShape, entries: number, outcomes: number): ScannedTransitions | null {
  const nF = shape.features.length;
  const featureKeys = shape.features.map(bytesOf);
  const state = new Int32Array(entries);
  const action = new Int32Array(entries);
  const outStart = new Int32Array(entries + 1);
  const next = new Int32Array(outcomes);
  const prob = new Float64Array(outcomes);
  const featureValues = new Float64Array(outcomes * nF);
  const intent = new Float64Array(outcomes);
  const stamp = new Int32Array(nF);
  const view = Buffer.from(b.buffer, b.byteOffset, b.byteLength) as Buffer & { latin1Slice?: (from: number, to: number) => string };
  // Buffer's own slice decoder when this Node has it (no argument checks per call), else toString.
  const latin1 = typeof view.latin1Slice === "function" ? (x: number, y: number): string => view.latin1Slice!(x, y) : (x: number, y: number): string => view.toString("latin1", x, y);
  let i = from;
  let nE = 0;
  let nO = 0;

  const fail = (): never => {
    throw GIVE_UP;
  };
  const expect = (c: number): void => {
    i = ws(b, i);
    if (i >= to || b[i] !== c) fail();
    i++;
  };
  /** A key: its [start, end) bytes (no escapes), then the colon. */
  let ks = 0;
  let ke = 0;
  const key = (): void => {
    i = ws(b, i);
    if (b[i] !== QUOTE) fail();
    ks = i + 1;
    for (i = ks; i < to; i++) {
      const c = b[i];
      if (c === QUOTE) break;
      if (c === BACKSLASH || c < 0x20) fail();
    }
    if (i >= to) fail();
    ke = i;
    i++;
    expect(COLON);
  };
  const keyIs = (k: Uint8Array): boolean => {
    if (ke - ks !== k.length) return false;
    for (let j = 0; j < k.length; j++) if (b[ks + j] !== k[j]) return false;
    return true;
  };
  /** `,` (true) or the closing bracket (false). */
  const more = (close: number): boolean => {
    i = ws(b, i);
    if (b[i] === COMMA) {
      i++;
      return true;
    }
    if (b[i] === close) {
      i++;
      return false;
    }
    return fail();
  };
  /** A non-negative integer written as plain digits (up to 9 of them). */
  const int = (): number => {
    i = ws(b, i);
    const s = i;
    let v = 0;
    while (i < to && b[i] >= ZERO && b[i] <= NINE) v = v * 10 + (b[i++] - ZERO);
    const len = i - s;
    if (len === 0 || len > 9 || (len > 1 && b[s] === ZERO)) fail();
    return v;
  };
  /** A JSON number, parsed to the double JSON.parse gives. */
  const num = (): number => {
    i = ws(b, i);
    const s = i;
    let neg = false;
    if (b[i] === MINUS) {
      neg = true;
      i++;
    }
    let m = 0;
    let digits = 0;
    if (b[i] === ZERO) {
      i++;
      digits++;
    } else if (b[i] > ZERO && b[i] <= NINE) {
      while (i < to && b[i] >= ZERO && b[i] <= NINE) {
        m = m * 10 + (b[i++] - ZERO);
        digits++;
      }
    } else fail();
    let scale = 0;
    if (b[i] === DOT) {
      i++;
      const f0 = i;
      while (i < to && b[i] >= ZERO && b[i] <= NINE) {
        m = m * 10 + (b[i++] - ZERO);
        digits++;
      }
      if (i === f0) fail();
      scale = f0 - i;
    }
    if (b[i] === 0x65 || b[i] === 0x45) {
      i++;
      let eneg = false;
      if (b[i] === MINUS || b[i] === PLUS) eneg = b[i++] === MINUS;
      const e0 = i;
      let e = 0;
      while (i < to && b[i] >= ZERO && b[i] <= NINE) {
        if (e < 100000) e = e * 10 + (b[i] - ZERO);
        i++;
      }
      if (i === e0) fail();
      scale += eneg ? -e : e;
    }
    // Exact when the digits fit in 15 and the power of ten is exact: one correctly rounded operation.
    if (digits <= 15 && scale >= -22 && scale <= 22) {
      const v = scale >= 0 ? m * POW10[scale] : m / POW10[-scale];
      return neg ? -v : v;
    }
    return Number(latin1(s, i));
  };
  const featureObject = (o: number): void => {
    expect(LBRACE);
    i = ws(b, i);
    if (b[i] === RBRACE) {
      i++;
      return;
    }
    do {
      key();
      let f = -1;
      for (let j = 0; j < nF; j++) {
        const k = featureKeys[j];
        if (ke - ks !== k.length) continue;
        let eq = true;
        for (let q = 0; q < k.length && eq; q++) eq = b[ks + q] === k[q];
        if (eq) {
          f = j;
          break;
        }
      }
      if (f < 0 || stamp[f] === o + 1) fail();
      stamp[f] = o + 1;
      featureValues[o * nF + f] = num();
    } while (more(RBRACE));
  };
  const outcome = (): void => {
    if (nO >= outcomes) fail();
    const o = nO++;
    let seen = 0;
    expect(LBRACE);
    do {
      key();
      if (keyIs(K_NEXT) && !(seen & 1)) {
        seen |= 1;
        next[o] = int();
      } else if (keyIs(K_P) && !(seen & 2)) {
        seen |= 2;
        prob[o] = num();
      } else if (keyIs(K_FEATURES) && !(seen & 4)) {
        seen |= 4;
        featureObject(o);
      } else if (keyIs(K_INTENT) && !(seen & 8)) {
        seen |= 8;
        intent[o] = num();
      } else fail();
    } while (more(RBRACE));
    if ((seen & 3) !== 3) fail();
  };
  const entry = (): void => {
    if (nE >= entries) fail();
    const e = nE++;
    let seen = 0;
    outStart[e] = nO;
    expect(LBRACE);
    do {
      key();
      if (keyIs(K_STATE) && !(seen & 1)) {
        seen |= 1;
        state[e] = int();
      } else if (keyIs(K_ACTION) && !(seen & 2)) {
        seen |= 2;
        action[e] = int();
      } else if (keyIs(K_OUTCOMES) && !(seen & 4)) {
        seen |= 4;
        if (nO !== outStart[e]) fail();
        expect(LBRACK);
        do outcome();
        while (more(RBRACK));
      } else fail();
    } while (more(RBRACE));
    if (seen !== 7) fail();
  };

  try {
    expect(LBRACK);
    i = ws(b, i);
    if (b[i] === RBRACK) i++;
    else {
      do entry();
      while (more(RBRACK));
    }
    if (ws(b, i) !== to) fail();
  } catch (e) {
    if (e === GIVE_UP) return null;
    throw e;
  }
  outStart[nE] = nO;
  if (nE !== entries || nO !== outcomes) return null;
  return { count: nE, state, action, outStart, next, prob, featureValues, intent };
}
