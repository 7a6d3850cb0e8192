/**
 * CRC-32C (Castagnoli): reflected polynomial 0x82F63B78, initial value 0xFFFFFFFF, final XOR 0xFFFFFFFF
 * (the "CRC-32/ISCSI" entry of the CRC catalogue; RFC 3720 section 12.1 and appendix B.4), and the
 * masked form TFRecord files store (tensorflow/core/lib/hash/crc32c.h `Mask`):
 *   masked = ((crc >>> 15) | (crc << 17)) + 0xa282ead8   (mod 2^32)
 *
 * Hand-written on purpose: a byte-wise table is 20 lines, has no dependency to vet or keep current, and
 * the event files it checks are small (kilobytes to a few megabytes), so a sliced or native CRC would
 * buy nothing measurable for `gapwatch ingest`.
 */

const POLY_REFLECTED = 0x82f63b78;
const MASK_DELTA = 0xa282ead8;

const TABLE: Uint32Array = (() => {
  const t = new Uint32Array(256);
  for (let n = 0; n < 256; n++) {
    let c = n;
    for (let k = 0; k < 8; k++) c = c & 1 ? (c >>> 1) ^ POLY_REFLECTED : c >>> 1;
    t[n] = c >>> 0;
  }
  return t;
})();

/** CRC-32C of bytes[start, end). */
export function crc32c(bytes: Uint8Array, start = 0, end = bytes.length): number {
  let c = 0xffffffff;
  for (let i = start; i < end; i++) c = TABLE[(c ^ bytes[i]) & 0xff] ^ (c >>> 8);
  return (c ^ 0xffffffff) >>> 0;
}

/** TFRecord's masking of a CRC (rotate right by 15, add a constant), mod 2^32. */
export function maskCrc(crc: number): number {
  return ((((crc >>> 15) | (crc << 17)) >>> 0) + MASK_DELTA) >>> 0;
}

/** Masked CRC-32C of bytes[start, end), as stored after a TFRecord length and after its data. */
export function maskedCrc32c(bytes: Uint8Array, start = 0, end = bytes.length): number {
  return maskCrc(crc32c(bytes, start, end));
}
