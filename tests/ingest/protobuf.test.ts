import { describe, expect, it } from "vitest";
import { halfToNumber, readVarint, varintToInt32, varintToInt64, WireError, wireFields } from "../../src/ingest/protobuf.js";

describe("protobuf wire format", () => {
  it("reads varints as in the encoding guide (https://protobuf.dev/programming-guides/encoding/)", () => {
    // Encoding guide: 1 is 01; 150 is 96 01; 300 is ac 02 (the guide's base-128 varint examples).
    expect(readVarint(Uint8Array.from([0x01]), 0)).toEqual({ value: 1, next: 1 });
    expect(readVarint(Uint8Array.from([0x96, 0x01]), 0)).toEqual({ value: 150, next: 2 });
    expect(readVarint(Uint8Array.from([0xac, 0x02]), 0)).toEqual({ value: 300, next: 2 });
    // Encoding guide: negative int32/int64 values are 10 bytes, sign-extended; -1 is ff ff ff ff ff ff ff ff ff 01.
    const minusOne = readVarint(Uint8Array.from([0xff, 0xff, 0xff, 0xff, 0xff, 0xff, 0xff, 0xff, 0xff, 0x01]), 0);
    expect(minusOne.next).toBe(10);
    expect(varintToInt64(minusOne.value)).toBe(-1);
    expect(varintToInt32(minusOne.value)).toBe(-1);
    // 2^53 needs 8 bytes: 80 80 80 80 80 80 80 10 (53 = 7 * 7 + 4, so the 8th byte holds 2^4)
    expect(varintToInt64(readVarint(Uint8Array.from([0x80, 0x80, 0x80, 0x80, 0x80, 0x80, 0x80, 0x10]), 0).value)).toBe(2 ** 53);
    expect(() => readVarint(Uint8Array.from([0x80, 0x80]), 0)).toThrow(WireError);
    expect(() => readVarint(new Uint8Array(11).fill(0x80), 0)).toThrow(/longer than 10 bytes/);
  });

  it("walks fields of every wire type and refuses a length running past the end", () => {
    // Encoding guide example: field 1 varint 150 is 08 96 01; field 2 string "testing" is 12 07 74 65 73 74 69 6e 67.
    const msg = Uint8Array.from([0x08, 0x96, 0x01, 0x12, 0x07, ...new TextEncoder().encode("testing"), 0x1d, 0, 0, 0x80, 0x3f, 0x21, 0, 0, 0, 0, 0, 0, 0xf0, 0x3f]);
    const fields = [...wireFields(msg)];
    expect(fields.map((f) => [f.field, f.wire])).toEqual([[1, 0], [2, 2], [3, 5], [4, 1]]);
    expect(fields[0].wire === 0 && fields[0].varint).toBe(150);
    expect(fields[1].wire === 2 && [fields[1].start, fields[1].end]).toEqual([5, 12]);
    // field 3 fixed32 float 1.0 (00 00 80 3f) and field 4 fixed64 double 1.0 (... f0 3f), little-endian
    const dv = new DataView(msg.buffer);
    expect(fields[2].wire === 5 && dv.getFloat32(fields[2].start, true)).toBe(1);
    expect(fields[3].wire === 1 && dv.getFloat64(fields[3].start, true)).toBe(1);
    expect(fields.map((f) => f.at)).toEqual([0, 3, 12, 17]);
    expect(() => [...wireFields(Uint8Array.from([0x12, 0x09, 0x41]))]).toThrow(/claims 9 bytes/);
    expect(() => [...wireFields(Uint8Array.from([0x0b]))]).toThrow(/wire type 3/); // a group start: refused
  });

  it("converts IEEE 754 binary16 bits (values from the standard's format: 1 sign, 5 exponent, 10 fraction bits)", () => {
    expect(halfToNumber(0x3c00)).toBe(1);
    expect(halfToNumber(0xc000)).toBe(-2);
    expect(halfToNumber(0x7bff)).toBe(65504); // largest finite half
    expect(halfToNumber(0x0001)).toBe(2 ** -24); // smallest subnormal
    expect(halfToNumber(0x7c00)).toBe(Infinity);
    expect(halfToNumber(0x7e00)).toBeNaN();
  });
});
