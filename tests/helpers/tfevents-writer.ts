/**
 * A small protobuf encoder for writing event files in tests: the inverse of src/ingest/tf-event.ts, kept
 * apart from it (written from the wire-format spec, https://protobuf.dev/programming-guides/encoding/)
 * so the reader is checked against an independent writer. Field numbers as in event.proto,
 * summary.proto and tensor.proto (see src/ingest/tf-event.ts).
 */
import { frameRecord } from "../../src/ingest/tfrecord.js";

function varint(v: bigint): number[] {
  const out: number[] = [];
  let x = BigInt.asUintN(64, v);
  while (x >= 0x80n) {
    out.push(Number(x & 0x7fn) | 0x80);
    x >>= 7n;
  }
  out.push(Number(x));
  return out;
}
const key = (field: number, wire: number): number[] => varint(BigInt((field << 3) | wire));
const lenField = (field: number, body: number[]): number[] => [...key(field, 2), ...varint(BigInt(body.length)), ...body];
const f64 = (x: number): number[] => {
  const b = new Uint8Array(8);
  new DataView(b.buffer).setFloat64(0, x, true);
  return [...b];
};
const f32 = (x: number): number[] => {
  const b = new Uint8Array(4);
  new DataView(b.buffer).setFloat32(0, x, true);
  return [...b];
};
const str = (s: string): number[] => [...new TextEncoder().encode(s)];

/** How a scalar is stored: PyTorch-style simple_value, or a TF2-style scalar tensor. */
export type ScalarEncoding = "simple" | "float-val" | "float-content" | "double-val" | "double-content" | "half-val";

export interface ScalarSpec {
  tag: string;
  value: number;
  encoding?: ScalarEncoding;
}

function tensor(value: number, enc: ScalarEncoding): number[] {
  const dtype = enc.startsWith("float") ? 1 : enc.startsWith("double") ? 2 : 19;
  const body = [...key(1, 0), ...varint(BigInt(dtype)), ...lenField(2, [])];
  if (enc === "float-val") body.push(...lenField(5, f32(value)));
  else if (enc === "float-content") body.push(...lenField(4, f32(value)));
  else if (enc === "double-val") body.push(...lenField(6, f64(value)));
  else if (enc === "double-content") body.push(...lenField(4, f64(value)));
  else body.push(...lenField(13, varint(BigInt(halfBits(value)))));
  return body;
}

/** binary16 bits of a value exactly representable in half precision (tests use such values only). */
function halfBits(x: number): number {
  if (x === 0) return Object.is(x, -0) ? 0x8000 : 0;
  const sign = x < 0 ? 0x8000 : 0;
  const a = Math.abs(x);
  const e = Math.floor(Math.log2(a));
  const frac = Math.round((a / 2 ** e - 1) * 1024);
  return sign | ((e + 15) << 10) | frac;
}

function summaryValue(s: ScalarSpec): number[] {
  const enc = s.encoding ?? "simple";
  const body = lenField(1, str(s.tag));
  if (enc === "simple") body.push(...key(2, 5), ...f32(s.value));
  else {
    body.push(...lenField(9, lenField(1, lenField(1, str("scalars")))));
    body.push(...lenField(8, tensor(s.value, enc)));
  }
  return body;
}

/** One serialized Event: wall time, step, and either a file_version or summary values. */
export function encodeEvent(e: { wallTime: number; step: number; fileVersion?: string; scalars?: ScalarSpec[] }): Uint8Array {
  const body = [...key(1, 1), ...f64(e.wallTime)];
  if (e.step !== 0) body.push(...key(2, 0), ...varint(BigInt(e.step)));
  if (e.fileVersion !== undefined) body.push(...lenField(3, str(e.fileVersion)));
  if (e.scalars !== undefined) body.push(...lenField(5, e.scalars.flatMap((s) => lenField(1, summaryValue(s)))));
  return Uint8Array.from(body);
}

/** A whole event file: the file_version event, then one event per entry. */
export function eventFile(events: { wallTime: number; step: number; scalars: ScalarSpec[] }[], startTime = 1_700_000_000): Uint8Array {
  const parts = [frameRecord(encodeEvent({ wallTime: startTime, step: 0, fileVersion: "brain.Event:2" })), ...events.map((e) => frameRecord(encodeEvent(e)))];
  return Buffer.concat(parts);
}
