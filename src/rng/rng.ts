/**
 * Seeded random sources. Every consumer gets an `Rng` passed explicitly; nothing in `src/` or
 * `policies/` uses the process-global generator. `fork(label)` derives an independent stream for a named consumer
 * (exploration, environment, evaluation, bootstrap), so adding draws in one place never shifts another.
 */
import seedrandom from "seedrandom";
import { InputError } from "../errors.js";

export interface Rng {
  /** A uniform unsigned 32-bit integer. */
  uint32(): number;
  /** A uniform float in [0, 1). */
  float(): number;
  /** A uniform integer in [0, n). */
  int(n: number): number;
  /** An independent stream derived from this one's seed and `label` (does not consume draws). */
  fork(label: string): Rng;
  /** The seed this stream was created from (for manifests and replay). */
  readonly seed: string;
}

const TWO32 = 4294967296;

/** FNV-1a over a string, as an unsigned 32-bit integer. Used to derive fork seeds. */
export function hash32(text: string): number {
  let h = 0x811c9dc5;
  for (let i = 0; i < text.length; i++) {
    h ^= text.charCodeAt(i);
    h = Math.imul(h, 0x01000193);
  }
  return h >>> 0;
}

/** Validate a user seed: a non-negative safe integer. Throws `config.seed` otherwise. */
export function parseSeed(value: unknown, where = "--seed"): number {
  const n = typeof value === "string" && value.trim() !== "" ? Number(value) : value;
  if (typeof n !== "number" || !Number.isSafeInteger(n) || n < 0) {
    throw new InputError("config.seed", `seed must be a non-negative integer, got ${JSON.stringify(value)}`, where);
  }
  return n;
}

class SeedRng implements Rng {
  private readonly prng: seedrandom.PRNG;
  constructor(readonly seed: string) {
    this.prng = seedrandom.alea(seed);
  }
  uint32(): number {
    return this.prng.int32() >>> 0;
  }
  float(): number {
    return this.prng.quick();
  }
  int(n: number): number {
    return Math.floor(this.prng.quick() * n);
  }
  fork(label: string): Rng {
    return new SeedRng(`${this.seed}/${label}`);
  }
}

/** The default generator: seedrandom's Alea, seeded from a string or integer. */
export function createRng(seed: number | string): Rng {
  return new SeedRng(String(seed));
}

/**
 * xorshift32 (Marsaglia 2003, shifts 13/17/5), the generator of the shared benchmark problem, so
 * the tabular learners reproduce the peers' checksums bit for bit. State is never 0.
 */
export class Xorshift32 implements Rng {
  private x: number;
  readonly seed: string;
  constructor(seed: number) {
    const s = seed >>> 0;
    if (s === 0) throw new InputError("config.seed", "xorshift32 seed must be non-zero", "seed");
    this.x = s | 0;
    this.seed = String(s);
  }
  uint32(): number {
    let x = this.x;
    x ^= x << 13;
    x ^= x >>> 17;
    x ^= x << 5;
    this.x = x;
    return x >>> 0;
  }
  float(): number {
    return this.uint32() / TWO32;
  }
  int(n: number): number {
    return Math.floor((this.uint32() * n) / TWO32);
  }
  fork(label: string): Rng {
    return new Xorshift32((hash32(`${this.seed}/${label}`) || 1) >>> 0);
  }
}
