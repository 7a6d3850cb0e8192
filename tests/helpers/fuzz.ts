/**
 * A seeded fuzzer for model files (gapwatch-mdp/1) and reward files (gapwatch-reward/1): it mutates
 * valid files (the output of `gapwatch export` and a matching reward file) and runs `solve`, `audit`
 * and `check` on each mutant through the CLI in-process. A case passes when it ends with exit 0 (and
 * only finite numbers in the --json document) or exit 2 with one printable line on stderr, within the
 * time limit. Exit 1, any other exit code, a multi-line error, a hang, a throw out of the CLI or a
 * non-finite number in the output is a failure. Used by tests/fuzz/fuzz.test.ts and scripts/fuzz.ts.
 */
import { mkdtempSync, rmSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { memoryIO } from "../../src/cli/io.js";
import { runCli } from "../../src/cli/program.js";
import { loadScenario } from "../../src/env/index.js";
import { exportModel, formatModelDocument } from "../../src/model/format/export.js";
import { createRng, type Rng } from "../../src/rng/rng.js";
import { crc32, encodeBinaryModel } from "../../src/model/format/binary.js";

type Json = null | boolean | number | string | Json[] | { [k: string]: Json };

/**
 * Valid seed files: two exported built-in scenarios (fresh-coat-tug, seed-vault-courier), as model
 * files and as compact .gwbin files, and a reward file for each.
 */
export function seedFiles(): { model: string; binary: Buffer; reward: string }[] {
  return ["fresh-coat-tug", "seed-vault-courier"].flatMap((name) => {
    const { model } = loadScenario(name);
    const text = formatModelDocument(exportModel(model));
    const features = model.features.slice(0, 3);
    const reward = JSON.stringify({ format: "gapwatch-reward/1", name: "fz", env: model.name, weights: Object.fromEntries(features.map((f, i) => [f, i === 0 ? -1 : 0.5])) });
    return [{ model: text, binary: encodeBinaryModel(model), reward }];
  });
}

/**
 * A damaged .gwbin file: a truncation, flipped bytes, a changed length or version field, or a
 * structural mutation of the JSON header with its CRC-32 recomputed (so the header checks, not the
 * checksum, must catch it).
 */
export function mutateBinary(bytes: Buffer, rng: Rng): Buffer {
  const b = Buffer.from(bytes);
  switch (rng.int(5)) {
    case 0:
      return b.subarray(0, rng.int(b.length));
    case 1:
      for (let k = 1 + rng.int(4); k > 0; k--) b[rng.int(b.length)] ^= 1 << rng.int(8);
      return b;
    case 2:
      b.writeUInt32LE(pick(rng, [0, 1, 2, 7, 0xffffffff, b.length, rng.int(b.length)]), pick(rng, [8, 12, 16]));
      return b;
    default: {
      // Padded back to the old length when shorter, so the section offsets still hold.
      const len = b.readUInt32LE(12);
      let header = Buffer.from(mutate(b.toString("utf8", 24, 24 + len).trimEnd(), rng), "utf8");
      if (header.length < len) header = Buffer.concat([header, Buffer.alloc(len - header.length, 0x20)]);
      const out = Buffer.concat([b.subarray(0, 24), header, b.subarray(24 + len)]);
      out.writeUInt32LE(header.length, 12);
      out.writeUInt32LE(crc32(header), 16);
      return out;
    }
  }
}

const PROTO_NAMES = ["__proto__", "constructor", "toString", "valueOf", "hasOwnProperty", "isPrototypeOf"];
const HUGE = [1e308, -1e308, 1.7e308, 1e9, 1e12, -1, 2, 1 + 1e-6, -0.5, 0, 4294967296, 2147483647, 0.1, 1e-320];

const pick = <T>(rng: Rng, xs: readonly T[]): T => xs[rng.int(xs.length)];

/** Every container (object or array) in `v` with the key or index of one of its members. */
function slots(v: Json, out: { holder: Json[] | { [k: string]: Json }; key: string | number }[] = []): typeof out {
  if (Array.isArray(v)) v.forEach((x, i) => (out.push({ holder: v, key: i }), slots(x, out)));
  else if (v !== null && typeof v === "object") for (const [k, x] of Object.entries(v)) (out.push({ holder: v, key: k }), slots(x, out));
  return out;
}

function randomValue(rng: Rng): Json {
  switch (rng.int(8)) {
    case 0: return null;
    case 1: return pick(rng, [true, false]);
    case 2: return pick(rng, HUGE);
    case 3: return pick(rng, ["", "x", ...PROTO_NAMES, "\u001b[31mred", "\u202edir", "a".repeat(1 + rng.int(100_000))]);
    case 4: return [];
    case 5: return {};
    case 6: return [pick(rng, HUGE)];
    default: return { [pick(rng, PROTO_NAMES)]: pick(rng, HUGE) };
  }
}

/** One structural mutation of a parsed document, in place (the parsed value may be replaced: returned). */
function mutateValue(doc: Json, rng: Rng): Json {
  const all = slots(doc);
  if (all.length === 0) return randomValue(rng);
  const { holder, key } = pick(rng, all);
  const get = (): Json => (holder as Record<string | number, Json>)[key];
  const set = (v: Json) => ((holder as Record<string | number, Json>)[key] = v);
  const cur = get();
  switch (rng.int(10)) {
    case 0: // deleted key / element
      if (Array.isArray(holder)) holder.splice(key as number, 1);
      else delete holder[key as string];
      break;
    case 1: // wrong type
      set(randomValue(rng));
      break;
    case 2: // numbers: huge, negative, excess probabilities, out-of-range indices
      set(typeof cur === "number" ? pick(rng, [cur * 1e300, -cur, cur + 1, cur + 1000, cur * 2, ...HUGE]) : pick(rng, HUGE));
      break;
    case 3: // duplicates
      if (Array.isArray(holder)) holder.splice(key as number, 0, JSON.parse(JSON.stringify(cur)) as Json);
      else set(Array.isArray(cur) ? [...cur, ...cur] : cur);
      break;
    case 4: // prototype names as keys
      if (!Array.isArray(holder)) {
        delete holder[key as string];
        holder[pick(rng, PROTO_NAMES)] = cur;
      } else set(pick(rng, PROTO_NAMES));
      break;
    case 5: // deep nesting (written into the text by `mutate`, so no recursion here meets it)
      set(`__DEEP_${pick(rng, [10, 600, 5000, 100_000])}__`);
      break;
    case 6: // long strings (as values and as keys)
      if (!Array.isArray(holder) && rng.int(2)) {
        delete holder[key as string];
        holder["k".repeat(1 + rng.int(1_000_000))] = cur;
      } else set("s".repeat(1 + rng.int(1_000_000)));
      break;
    case 7: // states: a huge count
      if (!Array.isArray(doc) && doc !== null && typeof doc === "object" && "states" in doc) doc.states = pick(rng, [1e9, 1e12, 5_000_000, 100_001, 0, -3, 2.5]);
      else set(randomValue(rng));
      break;
    case 8: // NaN / Infinity written as text later
      set("__NONFINITE__");
      break;
    default: { // another slot's value copied here (a copy: an ancestor would make the document circular)
      const other = pick(rng, all);
      const v = (other.holder as Record<string | number, Json>)[other.key];
      set(v === undefined ? null : (JSON.parse(JSON.stringify(v)) as Json));
    }
  }
  return doc;
}

/** Text-level damage: BOM, truncation, binary garbage. */
function mutateText(text: string, rng: Rng): string {
  switch (rng.int(4)) {
    case 0:
      return "\ufeff" + text;
    case 1:
      return text.slice(0, rng.int(text.length + 1));
    case 2: {
      const at = rng.int(text.length + 1);
      const junk = Array.from({ length: 1 + rng.int(16) }, () => String.fromCharCode(rng.int(256))).join("");
      return text.slice(0, at) + junk + text.slice(at);
    }
    default: {
      const bytes = Array.from({ length: rng.int(64) }, () => String.fromCharCode(rng.int(65536))).join("");
      return bytes;
    }
  }
}

/** A mutated file: mostly structural mutations (1-3), sometimes text damage. */
export function mutate(text: string, rng: Rng): string {
  if (rng.int(6) === 0) return mutateText(text, rng);
  let doc = JSON.parse(text) as Json;
  const n = 1 + rng.int(3);
  for (let i = 0; i < n; i++) doc = mutateValue(doc, rng);
  const NF = ["NaN", "Infinity", "-Infinity", "1e999", "-1e999"];
  return JSON.stringify(doc)
    .replace(/"__NONFINITE__"/g, () => pick(rng, NF))
    .replace(/"__DEEP_(\d+)__"/g, (_m, d: string) => {
      const [open, close] = rng.int(2) ? ["[", "]"] : ['{"k":', "}"];
      return open.repeat(Number(d)) + "1" + close.repeat(Number(d));
    });
}

export type Outcome = "ok" | "refused" | "exit1" | "otherExit" | "multiLine" | "threw" | "slow" | "nonFinite";

export interface FuzzCase {
  index: number;
  command: string;
  target: "model" | "reward" | "gwbin";
  outcome: Outcome;
  code: number;
  ms: number;
  firstLine: string;
}

/**
 * Keys whose null is documented (not a non-finite number): a policy's null marks a terminal state,
 * `designerOptimalIdlesAt` is null when the designer-optimal policy idles nowhere; check's
 * counterexamples are module data.
 */
const NULLABLE = new Set(["policy", "designerOptimalIdlesAt", "counterexample", "path"]);

/** JSON paths of non-finite numbers (JSON.stringify writes them as null) in a --json document. */
export function nonFinitePaths(v: unknown, path = "$"): string[] {
  if (v === null) return [path];
  if (Array.isArray(v)) return v.flatMap((x, i) => nonFinitePaths(x, `${path}[${i}]`));
  if (typeof v === "object") return Object.entries(v as object).flatMap(([k, x]) => (NULLABLE.has(k) ? [] : nonFinitePaths(x, `${path}.${k}`)));
  return [];
}

const COMMANDS: string[][] = [["solve", "--json"], ["audit", "--no-sensitivity", "--json"], ["check", "--runs", "3", "--json"]];

export interface FuzzOptions {
  cases: number;
  seed: number | string;
  /** First case index (cases are independent: case i draws from its own fork of the seed). Default 0. */
  from?: number;
  /** A case taking longer than this (ms) is a failure ("slow"); default 5000. */
  timeLimitMs?: number;
  /** Called after each case. */
  onCase?: (c: FuzzCase) => void;
}

/** Run `cases` seeded cases; returns them all. Files go to a temporary folder removed at the end. */
export async function runFuzz(opts: FuzzOptions): Promise<FuzzCase[]> {
  const rng = createRng(opts.seed);
  const seeds = seedFiles();
  const dir = mkdtempSync(join(tmpdir(), "gapwatch-fuzz-"));
  const limit = opts.timeLimitMs ?? 5000;
  const out: FuzzCase[] = [];
  try {
    for (let index = opts.from ?? 0; index < (opts.from ?? 0) + opts.cases; index++) {
      const caseRng = rng.fork(`case-${index}`);
      const base = pick(caseRng, seeds);
      // A separate stream picks the .gwbin cases, so the other cases stay those of earlier runs.
      const binRng = rng.fork(`gwbin-${index}`);
      const target = caseRng.int(4) === 0 ? "reward" : binRng.int(5) === 0 ? "gwbin" : "model";
      const cmd = pick(caseRng, COMMANDS);
      const modelText = target === "model" ? mutate(base.model, caseRng) : base.model;
      const rewardText = target === "reward" ? mutate(base.reward, caseRng) : base.reward;
      const modelFile = join(dir, target === "gwbin" ? `model-${index}.gwbin` : `model-${index}.json`);
      const rewardFile = join(dir, `reward-${index}.json`);
      writeFileSync(modelFile, target === "gwbin" ? mutateBinary(base.binary, binRng) : modelText);
      writeFileSync(rewardFile, rewardText);
      const args = [cmd[0], "--env", modelFile, ...(cmd[0] !== "check" ? ["--reward", rewardFile] : []), ...cmd.slice(1)];
      const io = memoryIO();
      const t0 = performance.now();
      let code = -1;
      let threw = false;
      try {
        code = await runCli(args, io);
      } catch (e) {
        threw = true;
        io.err(`thrown: ${(e as Error)?.message}\n`);
      }
      const ms = performance.now() - t0;
      const lines = io.stderr.trimEnd().split("\n").filter((l) => l.length > 0);
      let outcome: Outcome;
      if (threw) outcome = "threw";
      else if (ms > limit) outcome = "slow";
      else if (code === 1) outcome = "exit1";
      else if (code === 2) outcome = lines.length === 1 && lines[0].length <= 500 && !/[\u0000-\u0008\u000b-\u001f\u007f]/.test(lines[0]) ? "refused" : "multiLine";
      else if (code === 0 || (code === 3 && cmd[0] === "check")) {
        let bad: string[] = [];
        try {
          bad = nonFinitePaths(JSON.parse(io.stdout));
        } catch {
          bad = ["(stdout is not one JSON document)"];
        }
        outcome = bad.length ? "nonFinite" : "ok";
        if (bad.length) lines.unshift(`non-finite at ${bad.slice(0, 3).join(", ")}`);
      } else outcome = "otherExit";
      const c: FuzzCase = { index, command: cmd[0], target, outcome, code, ms, firstLine: (lines[0] ?? "").slice(0, 300) };
      out.push(c);
      opts.onCase?.(c);
      rmSync(modelFile, { force: true });
      rmSync(rewardFile, { force: true });
    }
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
  return out;
}

/** Counts per outcome and per exit code. */
export function summarize(cases: readonly FuzzCase[]): { outcomes: Record<string, number>; exitCodes: Record<string, number> } {
  const outcomes: Record<string, number> = Object.create(null);
  const exitCodes: Record<string, number> = Object.create(null);
  for (const c of cases) {
    outcomes[c.outcome] = (outcomes[c.outcome] ?? 0) + 1;
    exitCodes[String(c.code)] = (exitCodes[String(c.code)] ?? 0) + 1;
  }
  return { outcomes, exitCodes };
}

/** A case that breaks the contract. */
export const isFailure = (c: FuzzCase): boolean => c.outcome !== "ok" && c.outcome !== "refused";
