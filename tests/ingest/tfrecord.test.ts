import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { frameRecord, isFramingError, looksLikeTfRecord, readRecords } from "../../src/ingest/tfrecord.js";

const bytes = (s: string): Uint8Array => new TextEncoder().encode(s);
const text = (b: Uint8Array): string => new TextDecoder().decode(b);

describe("TFRecord framing", () => {
  const file = Buffer.concat([frameRecord(bytes("alpha")), frameRecord(bytes("")), frameRecord(bytes("gamma-record"))]);

  it("frames as length, masked CRC of length, data, masked CRC of data (record_writer.cc layout)", () => {
    const r = frameRecord(bytes("alpha"));
    // 8 length bytes + 4 + 5 data bytes + 4, per tensorflow/core/lib/io/record_writer.cc
    expect(r.length).toBe(21);
    expect(Buffer.from(r).readBigUInt64LE(0)).toBe(5n);
    expect(text(r.subarray(12, 17))).toBe("alpha");
    expect(looksLikeTfRecord(r)).toBe(true);
    expect(looksLikeTfRecord(bytes("step,reward\n1,2\n"))).toBe(false);
  });

  it("reads every record and stops exactly at the end: complete", () => {
    const r = readRecords(file);
    expect(r.status).toBe("complete");
    expect(r.records.map(text)).toEqual(["alpha", "", "gamma-record"]);
    expect(r.recordOffsets).toEqual([0, 21, 37]);
    expect(r.offset).toBe(file.length);
  });

  it("reports a half-written last record as partial at the start of that record, then completes", () => {
    for (let cut = 38; cut < file.length; cut++) {
      const r = readRecords(file.subarray(0, cut));
      expect(r.status).toBe("partial");
      expect(r.offset).toBe(37);
      expect(r.records.length).toBe(2);
      const rest = readRecords(file, r.offset);
      expect(rest.status).toBe("complete");
      expect(rest.records.map(text)).toEqual(["gamma-record"]);
    }
  });

  it("names the byte offset of a record whose length CRC or data CRC is wrong", () => {
    const lengthHit = Buffer.from(file);
    lengthHit[21 + 9] ^= 0x01; // CRC of the second record's length
    const a = readRecords(lengthHit);
    expect(isFramingError(a.status) && a.status.code).toBe("ingest.crc");
    expect(isFramingError(a.status) && a.status.offset).toBe(21);
    expect(a.records.length).toBe(1);

    const dataHit = Buffer.from(file);
    dataHit[37 + 12 + 3] ^= 0x40; // a data byte of the third record
    const b = readRecords(dataHit);
    expect(isFramingError(b.status) && b.status.offset).toBe(37);
    expect(isFramingError(b.status) && b.status.message).toMatch(/data bytes/);
    expect(b.offset).toBe(37);
  });

  it("property: any flipped bit is caught as a CRC error at or before its record, never read silently", () => {
    fc.assert(
      fc.property(fc.integer({ min: 0, max: file.length * 8 - 1 }), (bit) => {
        const hit = Buffer.from(file);
        hit[bit >> 3] ^= 1 << (bit & 7);
        const r = readRecords(hit);
        // The length is checked by its own CRC before it is trusted, so a flip there is an error too,
        // never a "partial" record waiting for bytes that will not come (CRCs catch every 1-bit error).
        return isFramingError(r.status) && r.status.offset <= (bit >> 3);
      }),
    );
  });
});
