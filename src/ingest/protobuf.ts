/**
 * A minimal protocol-buffers wire-format reader (https://protobuf.dev/programming-guides/encoding/):
 * a field key is a varint `(field_number << 3) | wire_type`; wire types 0 varint, 1 fixed 64-bit,
 * 2 length-delimited, 5 fixed 32-bit. Groups (3, 4) are deprecated and refused. Unknown fields are
 * skipped by the caller simply not asking for them. Pure; a malformed message throws `WireError` with the
 * byte offset inside the message.
 *
 * Hand-written rather than a protobuf package: we read four small messages and a handful of fields, a
 * generated-code toolchain (.proto files, codegen step) would be larger than this file.
 */

export class WireError extends Error {
  readonly offset: number;
  constructor(message: string, offset: number) {
    super(message);
    this.name = "WireError";
    this.offset = offset;
  }
}

export type WireField =
  | { readonly field: number; readonly wire: 0; readonly varint: number | bigint; readonly at: number }
  | { readonly field: number; readonly wire: 1 | 5; readonly at: number }
  | { readonly field: number; readonly wire: 2; readonly start: number; readonly end: number; readonly at: number };

/**
 * Varint at `at`: value and the offset after it. At most 10 bytes (64 bits). The value is a plain number
 * when it is below 2^53 (exact), else a bigint (the raw unsigned 64 bits, e.g. a negative int64).
 */
export function readVarint(buf: Uint8Array, at: number, end = buf.length): { value: number | bigint; next: number } {
  let value = 0;
  let scale = 1;
  for (let i = at; i < end && i - at < 7; i++) {
    const b = buf[i];
    value += (b & 0x7f) * scale;
    if (b < 0x80) return { value, next: i + 1 };
    scale *= 128;
  }
  // Longer than 7 bytes (>= 2^49) or cut short: the exact path.
  let big = 0n;
  for (let i = at, shift = 0n; i < end && i - at < 10; i++, shift += 7n) {
    const b = buf[i];
    big |= BigInt(b & 0x7f) << shift;
    if (b < 0x80) {
      const u = BigInt.asUintN(64, big);
      return { value: u <= BigInt(Number.MAX_SAFE_INTEGER) ? Number(u) : u, next: i + 1 };
    }
  }
  throw new WireError(end - at >= 10 ? "varint longer than 10 bytes" : "message ends inside a varint", at);
}

/** Every field of the message in buf[start, end), in order. */
export function* wireFields(buf: Uint8Array, start = 0, end = buf.length): Generator<WireField> {
  let at = start;
  while (at < end) {
    const keyAt = at;
    const key = readVarint(buf, at, end);
    at = key.next;
    if (typeof key.value !== "number" || key.value >= 2 ** 32) throw new WireError("field key out of range", keyAt);
    const field = Math.floor(key.value / 8);
    const wire = key.value % 8;
    if (field === 0) throw new WireError("field number 0 is not allowed", keyAt);
    if (wire === 0) {
      const v = readVarint(buf, at, end);
      at = v.next;
      yield { field, wire, varint: v.value, at: keyAt };
    } else if (wire === 1 || wire === 5) {
      const size = wire === 1 ? 8 : 4;
      if (at + size > end) throw new WireError(`message ends inside a ${size * 8}-bit field ${field}`, keyAt);
      yield { field, wire, at };
      at += size;
    } else if (wire === 2) {
      const len = readVarint(buf, at, end);
      const n = Number(len.value);
      if (len.next + n > end) throw new WireError(`length-delimited field ${field} claims ${n} bytes, only ${end - len.next} left`, keyAt);
      yield { field, wire, start: len.next, end: len.next + n, at: keyAt };
      at = len.next + n;
    } else {
      throw new WireError(`unsupported wire type ${wire} (field ${field})`, keyAt);
    }
  }
}

function view(buf: Uint8Array): DataView {
  return new DataView(buf.buffer, buf.byteOffset, buf.byteLength);
}

/** Little-endian IEEE double at `at`. */
export function readDouble(buf: Uint8Array, at: number): number {
  return view(buf).getFloat64(at, true);
}

/** Little-endian IEEE single at `at`, widened to a number. */
export function readFloat(buf: Uint8Array, at: number): number {
  return view(buf).getFloat32(at, true);
}

/** An int64 field's varint as a number (two's complement; exact up to 2^53 in magnitude). */
export function varintToInt64(v: number | bigint): number {
  return typeof v === "number" ? v : Number(BigInt.asIntN(64, v));
}

/** An int32 field's varint as a number (negative int32 values are written sign-extended to 64 bits). */
export function varintToInt32(v: number | bigint): number {
  return typeof v === "number" ? v | 0 : Number(BigInt.asIntN(32, v));
}

/** IEEE 754 half precision (binary16) bits to a number. */
export function halfToNumber(bits: number): number {
  const sign = bits & 0x8000 ? -1 : 1;
  const exp = (bits >> 10) & 0x1f;
  const frac = bits & 0x3ff;
  if (exp === 0) return sign * frac * 2 ** -24;
  if (exp === 0x1f) return frac === 0 ? sign * Infinity : NaN;
  return sign * (1 + frac / 1024) * 2 ** (exp - 15);
}

const utf8 = new TextDecoder("utf-8");

export function readString(buf: Uint8Array, start: number, end: number): string {
  return utf8.decode(buf.subarray(start, end));
}
