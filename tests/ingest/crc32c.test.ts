import { readFileSync } from "node:fs";
import { describe, expect, it } from "vitest";
import { crc32c, maskCrc, maskedCrc32c } from "../../src/ingest/crc32c.js";
import { trainingLog } from "../helpers/shared-fixtures.js";

describe("crc32c", () => {
  it("matches the check value of CRC-32/ISCSI", () => {
    // CRC RevEng catalogue, CRC-32/ISCSI: check = 0xE3069283 for the ASCII bytes "123456789".
    expect(crc32c(new TextEncoder().encode("123456789"))).toBe(0xe3069283);
  });

  it("matches the iSCSI test vectors of RFC 3720 appendix B.4", () => {
    // RFC 3720 B.4: 32 bytes of zeros -> aa 36 91 8a (stored little-endian) = 0x8A9136AA
    expect(crc32c(new Uint8Array(32))).toBe(0x8a9136aa);
    // RFC 3720 B.4: 32 bytes of 0xFF -> 43 ab a8 62 = 0x62A8AB43
    expect(crc32c(new Uint8Array(32).fill(0xff))).toBe(0x62a8ab43);
    // RFC 3720 B.4: 32 bytes ascending 0x00..0x1F -> 4e 79 dd 46 = 0x46DD794E
    expect(crc32c(Uint8Array.from({ length: 32 }, (_, i) => i))).toBe(0x46dd794e);
    // RFC 3720 B.4: 32 bytes descending 0x1F..0x00 -> 5c db 3f 11 = 0x113FDB5C
    expect(crc32c(Uint8Array.from({ length: 32 }, (_, i) => 31 - i))).toBe(0x113fdb5c);
  });

  it("reads a sub-range the same as a copy of it", () => {
    const b = new TextEncoder().encode("xx123456789yy");
    expect(crc32c(b, 2, 11)).toBe(0xe3069283);
  });

  it("masks as TFRecord writers do: the CRCs stored in a file TensorFlow wrote check out", () => {
    // tf2-scalar.tfevents was written by TensorFlow 2 (shared/fixtures/training-logs/README.md): its first
    // record's bytes 8..11 are the masked CRC of bytes 0..7, computed by TensorFlow's own writer.
    const buf = readFileSync(trainingLog("tf2-scalar.tfevents"));
    expect(maskedCrc32c(buf, 0, 8)).toBe(buf.readUInt32LE(8));
    const len = Number(buf.readBigUInt64LE(0));
    expect(maskedCrc32c(buf, 12, 12 + len)).toBe(buf.readUInt32LE(12 + len));
  });

  it("maskCrc is rotate-right-15 plus 0xa282ead8 mod 2^32", () => {
    // By the definition in tensorflow/core/lib/hash/crc32c.h: for crc = 0, rotation gives 0, so 0xa282ead8.
    expect(maskCrc(0)).toBe(0xa282ead8);
    // crc = 1 << 15 rotates to 1: 1 + 0xa282ead8.
    expect(maskCrc(1 << 15)).toBe(0xa282ead9);
    // crc = 0xFFFFFFFF rotates to itself: 0xFFFFFFFF + 0xa282ead8 - 2^32 = 0xa282ead7.
    expect(maskCrc(0xffffffff)).toBe(0xa282ead7);
  });
});
