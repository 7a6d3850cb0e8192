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

/** One field as a record: `at` is the offset of its key; `start` (and `end`) the offset of its value bytes. */
export type WireField =
  | { readonly field: number; readonly wire: 0; readonly varint: number | bigint; readonly at: number }
  | { readonly field: number; readonly wire: 1 | 5; readonly start: number; readonly at: number }
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

/**
 * A cursor over the fields of the message in buf[start, end): `next()` moves to the next field and sets
 * `field`, `wire`, `at` (offset of its key) and either `varint` (wire 0) or `start`/`end` (the bytes of a
 * length-delimited value, or of a fixed 32/64-bit value). No allocation per field.
 */
export class WireReader {
  field = 0;
  wire = 0;
  varint: number | bigint = 0;
  start = 0;
  end = 0;
  at = 0;
  private pos: number;
  private readonly dv: DataView;

  constructor(readonly buf: Uint8Array, from = 0, private readonly limit = buf.length) {
    this.pos = from;
    this.dv = new DataView(buf.buffer, buf.byteOffset, buf.byteLength);
  }

  next(): boolean {
    if (this.pos >= this.limit) return false;
    const buf = this.buf;
    const keyAt = this.pos;
    const key = readVarint(buf, keyAt, this.limit);
    if (typeof key.value !== "number" || key.value >= 2 ** 32) throw new WireError("field key out of range", keyAt);
    const field = Math.floor(key.value / 8);
    const wire = key.value % 8;
    if (field === 0) throw new WireError("field number 0 is not allowed", keyAt);
    let at = key.next;
    if (wire === 0) {
      const v = readVarint(buf, at, this.limit);
      this.varint = v.value;
      this.start = at;
      this.end = v.next;
    } else if (wire === 1 || wire === 5) {
      const size = wire === 1 ? 8 : 4;
      if (at + size > this.limit) throw new WireError(`message ends inside a ${size * 8}-bit field ${field}`, keyAt);
      this.start = at;
      this.end = at + size;
    } else if (wire === 2) {
      const len = readVarint(buf, at, this.limit);
      const n = typeof len.value === "number" ? len.value : Infinity;
      at = len.next;
      if (at + n > this.limit) throw new WireError(`length-delimited field ${field} claims ${n} bytes, only ${this.limit - at} left`, keyAt);
      this.start = at;
      this.end = at + n;
    } else {
      throw new WireError(`unsupported wire type ${wire} (field ${field})`, keyAt);
    }
    this.field = field;
    this.wire = wire;
    this.at = keyAt;
    this.pos = this.end;
    return true;
  }

  /** The current fixed 64-bit field as a little-endian double. */
  double(): number {
    return this.dv.getFloat64(this.start, true);
  }

  /** The current fixed 32-bit field as a little-endian float. */
  float(): number {
    return this.dv.getFloat32(this.start, true);
  }

  /** The current length-delimited field's bytes (a view). */
  bytes(): Uint8Array {
    return this.buf.subarray(this.start, this.end);
  }

  /** The current length-delimited field as UTF-8 text. */
  string(): string {
    return utf8.decode(this.buf.subarray(this.start, this.end));
  }
}

/** Every field of the message in buf[start, end), in order, as records (convenience over WireReader). */
export function* wireFields(buf: Uint8Array, start = 0, end = buf.length): Generator<WireField> {
  const r = new WireReader(buf, start, end);
  while (r.next()) {
    if (r.wire === 0) yield { field: r.field, wire: 0, varint: r.varint, at: r.at };
    else if (r.wire === 2) yield { field: r.field, wire: 2, start: r.start, end: r.end, at: r.at };
    else yield { field: r.field, wire: r.wire as 1 | 5, start: r.start, at: r.at };
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
