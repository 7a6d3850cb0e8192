/**
 * The compact model file (`.gwbin`, format "gapwatch-bin/1"): a compiled FiniteModel as it lies in
 * memory, for models too large to load quickly from JSON. Layout (all integers little-endian):
 *
 *   bytes 0..7    the magic "gapwatch" (ASCII)
 *   bytes 8..11   u32 format version (1)
 *   bytes 12..15  u32 header length H in bytes
 *   bytes 16..19  u32 CRC-32 of the header bytes
 *   bytes 20..23  u32 zero
 *   bytes 24..    the header: UTF-8 JSON (names, gamma, horizon, labels, features, groups, variants
 *                 with shaping, potentials, observation names, layout, description, and the section
 *                 table: name, element type, element count, byte offset and CRC-32 of each section)
 *   then          the sections, each at an offset that is a multiple of 8: terminal (u8, one per
 *                 state), start (f64), saStart (i32), next (i32), prob (f64), featureValues (f64),
 *                 intent (f64), then observations (f64) and one section per named potential (f64)
 *                 when the model has them.
 *
 * Everything a FiniteModel holds travels exactly (bit for bit, -0 included), except `source`, which
 * names the file it was read from. Loading checks the magic, version, lengths, offsets and CRC-32s,
 * then runs the checks every model passes (ModelBuilder.fromCsr) and the variant checks; a damaged or
 * truncated file is one InputError naming the file, the section and the byte offset.
 */
import { readFileSync } from "node:fs";
import { endianness } from "node:os";
import zlib from "node:zlib";
import { z } from "zod";
import { InputError } from "../../errors.js";
import { emptyDict } from "../../util/own.js";
import { ModelBuilder, type ModelExtras } from "../builder.js";
import { checkVariant } from "../reward.js";
import type { FiniteModel, Layout, RewardVariant } from "../types.js";
import { RESERVED_KEY } from "./json-errors.js";

export const BINARY_FORMAT = "gapwatch-bin/1";
/** File extension of the compact format. */
export const BINARY_EXTENSION = ".gwbin";
const MAGIC = "gapwatch";
const VERSION = 1;
const PREFIX = 24;

type ElementType = "u8" | "i32" | "f64";
const SIZE: Record<ElementType, number> = { u8: 1, i32: 4, f64: 8 };

interface SectionEntry {
  name: string;
  type: ElementType;
  count: number;
  offset: number;
  crc32: number;
  /** The potential a "potential" section holds. */
  of?: string;
}

const CRC_TABLE = (() => {
  const t = new Int32Array(256);
  for (let n = 0; n < 256; n++) {
    let c = n;
    for (let k = 0; k < 8; k++) c = c & 1 ? 0xedb88320 ^ (c >>> 1) : c >>> 1;
    t[n] = c;
  }
  return t;
})();

/** CRC-32 (the ISO-HDLC polynomial, as zlib computes it); zlib's own when this Node has it. */
export function crc32(bytes: Uint8Array): number {
  const native = (zlib as { crc32?: (data: Uint8Array) => number }).crc32;
  if (native) return native(bytes);
  let c = -1;
  for (let i = 0; i < bytes.length; i++) c = CRC_TABLE[(c ^ bytes[i]) & 0xff] ^ (c >>> 8);
  return (c ^ -1) >>> 0;
}

const bytesOf = (a: Uint8Array | Int32Array | Float64Array): Uint8Array => new Uint8Array(a.buffer, a.byteOffset, a.byteLength);
const littleEndian = endianness() === "LE";

/** Swap the bytes of each `size`-byte element in place (big-endian hosts). */
function swap(b: Uint8Array, size: number): void {
  if (size === 1) return;
  for (let i = 0; i + size <= b.length; i += size) b.subarray(i, i + size).reverse();
}

/** Encode a model in the compact format. */
export function encodeBinaryModel(model: FiniteModel): Buffer {
  const arrays: { name: string; type: ElementType; data: Uint8Array | Int32Array | Float64Array; of?: string }[] = [
    { name: "terminal", type: "u8", data: model.terminal },
    { name: "start", type: "f64", data: model.start },
    { name: "saStart", type: "i32", data: model.saStart },
    { name: "next", type: "i32", data: model.next },
    { name: "prob", type: "f64", data: model.prob },
    // Stored as f64 whatever the model holds (a Float32Array when every value is exact in float32: the
    // same numbers); the loader compacts it again.
    { name: "featureValues", type: "f64", data: model.featureValues instanceof Float64Array ? model.featureValues : Float64Array.from(model.featureValues) },
    { name: "intent", type: "f64", data: model.intent },
  ];
  if (model.observations) arrays.push({ name: "observations", type: "f64", data: model.observations.values });
  for (const [name, phi] of Object.entries(model.potentials ?? {})) arrays.push({ name: "potential", type: "f64", data: phi, of: name });
  const parts = arrays.map((a) => {
    const raw = bytesOf(a.data);
    const le = littleEndian ? raw : Uint8Array.from(raw);
    if (!littleEndian) swap(le, SIZE[a.type]);
    return { ...a, bytes: le };
  });
  // Offsets depend on the header length, which depends on the offsets: lay out with a header size
  // bound, then pad the header to it.
  const sectionsFor = (base: number): SectionEntry[] => {
    let at = base;
    return parts.map((p) => {
      const e: SectionEntry = { name: p.name, type: p.type, count: p.data.length, offset: at, crc32: crc32(p.bytes), ...(p.of === undefined ? {} : { of: p.of }) };
      at = align8(at + p.bytes.length);
      return e;
    });
  };
  const variants = model.variants
    ? Object.entries(model.variants).map(([key, v]) => ({ key, name: v.name, ...(v.env === undefined ? {} : { env: v.env }), ...(v.source === undefined ? {} : { source: v.source }), weights: Object.entries(v.weights).map(([f, w]) => [f, signed(w)]), ...(v.shaping ? { shaping: shapingToJson(v.shaping) } : {}) }))
    : undefined;
  const layout = model.layout ? layoutToJson(model.layout) : undefined;
  const headerOf = (sections: SectionEntry[]) => ({
    format: BINARY_FORMAT,
    name: model.name,
    gamma: model.gamma,
    horizon: model.horizon,
    nStates: model.nStates,
    actions: model.actions,
    stateLabels: model.stateLabels,
    features: model.features,
    ...(model.description === undefined ? {} : { description: model.description }),
    ...(model.groups ? { groups: model.groups.map((g) => g ?? null) } : {}),
    ...(variants ? { variants } : {}),
    ...(model.observations ? { observations: { dim: model.observations.dim, names: model.observations.names } } : {}),
    ...(layout ? { layout } : {}),
    sections,
  });
  let headerLen = Buffer.byteLength(JSON.stringify(headerOf(sectionsFor(0))), "utf8") + 64;
  let header: Buffer;
  for (;;) {
    header = Buffer.from(JSON.stringify(headerOf(sectionsFor(align8(PREFIX + headerLen)))), "utf8");
    if (header.length <= headerLen) break;
    headerLen = header.length + 64;
  }
  header = Buffer.concat([header, Buffer.alloc(headerLen - header.length, 0x20)]);
  const sections = sectionsFor(align8(PREFIX + headerLen));
  const total = parts.length ? align8(sections[sections.length - 1].offset + parts[parts.length - 1].bytes.length) : align8(PREFIX + headerLen);
  const out = Buffer.alloc(total);
  out.write(MAGIC, 0, "latin1");
  out.writeUInt32LE(VERSION, 8);
  out.writeUInt32LE(headerLen, 12);
  out.writeUInt32LE(crc32(header), 16);
  header.copy(out, PREFIX);
  parts.forEach((p, i) => out.set(p.bytes, sections[i].offset));
  return out;
}

const align8 = (n: number): number => Math.ceil(n / 8) * 8;

/** JSON has no -0: the header writes it as the string "-0" (where a number is expected) and reads it back. */
const signed = (x: number): number | "-0" => (Object.is(x, -0) ? "-0" : x);
const unsigned = (x: number | "-0"): number => (x === "-0" ? -0 : x);
const shapingToJson = (sh: NonNullable<RewardVariant["shaping"]>) => ({ potential: typeof sh.potential === "string" ? sh.potential : sh.potential.map(signed), scale: signed(sh.scale) });

function layoutToJson(l: Layout): unknown {
  return l.kind === "grid"
    ? { kind: "grid", rows: l.rows, cols: l.cols, map: l.map, cellOf: Array.from(l.cellOf) }
    : { kind: "track", length: l.length, gates: l.gates, posOf: Array.from(l.posOf), velOf: Array.from(l.velOf) };
}

const int = z.number().int().nonnegative();
const num = z.union([z.number(), z.literal("-0")]);
const shapingSchema = z.strictObject({ potential: z.union([z.string(), z.array(num)]), scale: num });
const headerSchema = z.strictObject({
  format: z.literal(BINARY_FORMAT),
  name: z.string(),
  gamma: z.number(),
  horizon: z.number(),
  nStates: int.min(1),
  actions: z.array(z.string()).min(1),
  stateLabels: z.array(z.string()),
  features: z.array(z.string()),
  description: z.string().optional(),
  groups: z.array(z.string().nullable()).optional(),
  variants: z.array(z.strictObject({ key: z.string(), name: z.string(), env: z.string().optional(), source: z.string().optional(), weights: z.array(z.tuple([z.string(), num])), shaping: shapingSchema.optional() })).optional(),
  observations: z.strictObject({ dim: int, names: z.array(z.string()) }).optional(),
  layout: z
    .union([
      z.strictObject({ kind: z.literal("grid"), rows: int, cols: int, map: z.array(z.string()), cellOf: z.array(z.number().int()) }),
      z.strictObject({ kind: z.literal("track"), length: int, gates: z.array(z.number().int()), posOf: z.array(z.number().int()), velOf: z.array(z.number().int()) }),
    ])
    .optional(),
  sections: z.array(z.strictObject({ name: z.string(), type: z.enum(["u8", "i32", "f64"]), count: int, offset: int, crc32: int, of: z.string().optional() })),
});

/** Decode a compact model file; `where` names it in messages. */
export function decodeBinaryModel(bytes: Uint8Array, where: string): FiniteModel {
  const bad = (what: string, fix = "export the model again"): never => {
    throw new InputError("model.binary", `${what}; ${fix}`, where);
  };
  const buf = Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  if (buf.length < PREFIX || buf.toString("latin1", 0, 8) !== MAGIC) {
    bad(`not a ${BINARY_FORMAT} file: it does not start with the 8 bytes "${MAGIC}"${buf.length < PREFIX ? ` (it has ${buf.length} bytes)` : ""}`, `give a file written by gapwatch export --format gwbin`);
  }
  const version = buf.readUInt32LE(8);
  if (version !== VERSION) bad(`format version ${version} at byte 8 is not supported (this gapwatch reads version ${VERSION})`, "export the model with this gapwatch");
  const headerLen = buf.readUInt32LE(12);
  if (PREFIX + headerLen > buf.length) bad(`truncated: the header needs bytes ${PREFIX}..${PREFIX + headerLen}, the file has ${buf.length} bytes`);
  const headerBytes = buf.subarray(PREFIX, PREFIX + headerLen);
  const stored = buf.readUInt32LE(16);
  const computed = crc32(headerBytes);
  if (stored !== computed) bad(`header (bytes ${PREFIX}..${PREFIX + headerLen}): CRC-32 mismatch (stored ${hex(stored)}, computed ${hex(computed)}); the file is damaged`);
  let raw: unknown;
  try {
    raw = JSON.parse(headerBytes.toString("utf8"));
  } catch (e) {
    bad(`header at byte ${PREFIX} is not valid JSON (${(e as Error).message})`);
  }
  const parsed = headerSchema.safeParse(raw);
  if (!parsed.success) {
    const issue = parsed.error.issues[0];
    bad(`header at byte ${PREFIX}: $.${issue.path.join(".")}: ${issue.message}`);
  }
  const h = parsed.data!;
  const nS = h.nStates;
  const nA = h.actions.length;
  const nF = h.features.length;
  for (const name of [...h.actions, ...h.features, ...(h.variants ?? []).flatMap((v) => [v.key, ...v.weights.map((w) => w[0])]), ...h.sections.map((s) => s.of ?? "")]) {
    if (name === RESERVED_KEY) bad(`header at byte ${PREFIX}: the name "${RESERVED_KEY}" is reserved`, "rename it in the model and export again");
  }
  if (h.stateLabels.length !== nS) bad(`header at byte ${PREFIX}: ${h.stateLabels.length} state labels for ${nS} states`);

  const dataStart = align8(PREFIX + headerLen);
  const used = new Set<string>();
  const read = (e: SectionEntry, want: ElementType, count: number | null): Uint8Array => {
    const at = `section "${e.name}${e.of === undefined ? "" : ` ${JSON.stringify(e.of)}`}" at byte ${e.offset}`;
    if (e.type !== want) bad(`${at}: element type ${e.type}, expected ${want}`);
    if (count !== null && e.count !== count) bad(`${at}: ${e.count} elements, expected ${count}`);
    const len = e.count * SIZE[want];
    if (e.offset < dataStart || e.offset % 8 !== 0) bad(`${at}: the offset is not an 8-byte boundary after the header (first is ${dataStart})`);
    if (e.offset + len > buf.length) bad(`truncated: ${at} needs bytes ${e.offset}..${e.offset + len}, the file has ${buf.length} bytes`);
    const out = new Uint8Array(len);
    out.set(buf.subarray(e.offset, e.offset + len));
    const c = crc32(out);
    if (c !== e.crc32) bad(`${at}: CRC-32 mismatch (stored ${hex(e.crc32)}, computed ${hex(c)}); the file is damaged`);
    if (!littleEndian) swap(out, SIZE[want]);
    return out;
  };
  const section = (name: string, want: ElementType, count: number | null): Uint8Array => {
    const e = h.sections.find((s) => s.name === name);
    if (!e) bad(`the header lists no section "${name}"`);
    if (used.has(name)) bad(`section "${name}" is listed twice`);
    used.add(name);
    return read(e!, want, count);
  };
  const f64 = (b: Uint8Array) => new Float64Array(b.buffer, b.byteOffset, b.byteLength / 8);
  const i32 = (b: Uint8Array) => new Int32Array(b.buffer, b.byteOffset, b.byteLength / 4);
  const terminal = section("terminal", "u8", nS);
  const start = f64(section("start", "f64", nS));
  const saStart = i32(section("saStart", "i32", nS * nA + 1));
  const next = i32(section("next", "i32", null));
  const nO = next.length;
  const prob = f64(section("prob", "f64", nO));
  const featureValues = f64(section("featureValues", "f64", nO * nF));
  const intent = f64(section("intent", "f64", nO));

  const extras: ModelExtras = {};
  if (h.groups) {
    if (h.groups.length !== nS) bad(`header at byte ${PREFIX}: ${h.groups.length} groups for ${nS} states`);
    extras.groups = h.groups;
  }
  if (h.observations) {
    const values = f64(section("observations", "f64", nS * h.observations.dim));
    if (h.observations.names.length !== h.observations.dim) bad(`header at byte ${PREFIX}: ${h.observations.names.length} observation names for dimension ${h.observations.dim}`);
    extras.observations = { dim: h.observations.dim, names: h.observations.names, values };
  }
  for (const e of h.sections) {
    if (e.name !== "potential") continue;
    if (e.of === undefined) bad(`section "potential" at byte ${e.offset} names no potential`);
    const potentials = (extras.potentials ??= emptyDict<Float64Array>());
    if (Object.hasOwn(potentials, e.of!)) bad(`section "potential" at byte ${e.offset}: potential ${JSON.stringify(e.of)} is listed twice`);
    potentials[e.of!] = f64(read(e, "f64", nS));
  }
  const unknown = h.sections.find((s) => s.name !== "potential" && !used.has(s.name));
  if (unknown) bad(`section "${unknown.name}" at byte ${unknown.offset} is not part of ${BINARY_FORMAT}`);
  if (h.variants) {
    const variants = emptyDict<RewardVariant>();
    for (const v of h.variants) {
      if (Object.hasOwn(variants, v.key)) bad(`header at byte ${PREFIX}: variant ${JSON.stringify(v.key)} is listed twice`);
      const weights = emptyDict<number>();
      for (const [f, w] of v.weights) weights[f] = unsigned(w);
      const shaping = v.shaping && { potential: typeof v.shaping.potential === "string" ? v.shaping.potential : v.shaping.potential.map(unsigned), scale: unsigned(v.shaping.scale) };
      variants[v.key] = { name: v.name, ...(v.env === undefined ? {} : { env: v.env }), ...(v.source === undefined ? {} : { source: v.source }), weights, ...(shaping ? { shaping } : {}) };
    }
    extras.variants = variants;
  }
  if (h.layout) {
    const l = h.layout;
    extras.layout = l.kind === "grid" ? { ...l, cellOf: Int32Array.from(l.cellOf) } : { ...l, posOf: Int32Array.from(l.posOf), velOf: Int32Array.from(l.velOf) };
  }
  const spec = { name: h.name, nStates: nS, actions: h.actions, features: h.features, gamma: h.gamma, horizon: h.horizon, stateLabels: h.stateLabels, description: h.description, source: where };
  const model = ModelBuilder.fromCsr(spec, { terminal, start, saStart, next, prob, featureValues, intent }, extras);
  for (const v of Object.values(model.variants ?? {})) checkVariant(model, v);
  return model;
}

const hex = (n: number): string => `0x${n.toString(16).padStart(8, "0")}`;

/** Read a compact model file. */
export function loadBinaryModelFile(file: string, where = file): FiniteModel {
  let bytes: Buffer;
  try {
    bytes = readFileSync(file);
  } catch (e) {
    throw new InputError("model.read", `cannot read the model file (${(e as NodeJS.ErrnoException).code ?? (e as Error).message}); check the path`, where);
  }
  return decodeBinaryModel(bytes, where);
}
