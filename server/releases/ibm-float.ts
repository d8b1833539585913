/**
 * IBM System/370 hexadecimal floating point, the numeric format of SAS transport (XPORT v5) files
 * (SAS technical note TS-140). An 8-byte IBM double is: 1 sign bit, a 7-bit exponent of 16 in
 * excess-64 notation, and a 56-bit fraction F read as 0.F (a value in [1/16, 1) once normalised),
 * so that value = (-1)^sign × 0.F × 16^(exponent − 64).
 *
 * The conversion from an IEEE 754 double is exact: the double's 53 significant bits, shifted left
 * by (its binary exponent mod 4) to line up with a hexadecimal digit, fit in the 56-bit fraction.
 */

/** Bytes of one numeric value in a transport file. */
export const IBM_FLOAT_BYTES = 8;

/** Largest magnitude an IBM double holds: just under 16^63. */
const IBM_MAX_EXPONENT_OF_16 = 63;
/** Smallest normalised magnitude: 16^-65. */
const IBM_MIN_EXPONENT_OF_16 = -64;

const scratch = new DataView(new ArrayBuffer(8));

/**
 * Writes `value` as an 8-byte IBM double at `offset`. Zero (of either sign) and values too small
 * for the format (below 16^-65) become true zero; NaN, infinities and values of 16^63 or more
 * throw a RangeError, since the format has no way to hold them (missing values are written with
 * {@link writeSasMissing}).
 */
export function writeIbmFloat64(value: number, target: Uint8Array, offset: number): void {
  if (!Number.isFinite(value)) throw new RangeError(`${value} cannot be written as an IBM floating-point number`);
  scratch.setFloat64(0, value);
  const high = scratch.getUint32(0);
  const low = scratch.getUint32(4);
  const sign = high >>> 31;
  const biasedExponent = (high >>> 20) & 0x7ff;
  // Zero, and IEEE subnormals (far below the IBM range), are written as zero.
  if (biasedExponent === 0) {
    target.fill(0, offset, offset + IBM_FLOAT_BYTES);
    return;
  }
  const exponentOf2 = biasedExponent - 1023;
  // value = 1.m × 2^e = 0.F × 16^q with q = floor(e / 4) + 1 and F = (1.m) << (e mod 4).
  const exponentOf16 = Math.floor(exponentOf2 / 4) + 1;
  const shift = exponentOf2 - 4 * (exponentOf16 - 1);
  if (exponentOf16 > IBM_MAX_EXPONENT_OF_16) {
    throw new RangeError(`${value} is too large for an IBM floating-point number (limit about 7.2e75)`);
  }
  if (exponentOf16 < IBM_MIN_EXPONENT_OF_16) {
    target.fill(0, offset, offset + IBM_FLOAT_BYTES);
    return;
  }
  // The 53-bit significand with its implicit leading 1, as 21 high bits and 32 low bits.
  const significandHigh = (high & 0xfffff) | 0x100000;
  const fractionHigh = shift === 0 ? significandHigh : (significandHigh << shift) | (low >>> (32 - shift));
  const fractionLow = (low << shift) >>> 0;
  target[offset] = (sign << 7) | (exponentOf16 + 64);
  target[offset + 1] = (fractionHigh >>> 16) & 0xff;
  target[offset + 2] = (fractionHigh >>> 8) & 0xff;
  target[offset + 3] = fractionHigh & 0xff;
  target[offset + 4] = fractionLow >>> 24;
  target[offset + 5] = (fractionLow >>> 16) & 0xff;
  target[offset + 6] = (fractionLow >>> 8) & 0xff;
  target[offset + 7] = fractionLow & 0xff;
}

/** `value` as a new 8-byte IBM double. */
export function toIbmFloat64(value: number): Buffer {
  const bytes = Buffer.alloc(IBM_FLOAT_BYTES);
  writeIbmFloat64(value, bytes, 0);
  return bytes;
}

/**
 * Writes a SAS missing numeric value: the missing code's character (`.` for the ordinary missing
 * value, `A`–`Z` or `_` for special missing values) followed by seven zero bytes (TS-140).
 */
export function writeSasMissing(target: Uint8Array, offset: number, code: '.' | '_' | string = '.'): void {
  if (!/^[._A-Z]$/.test(code)) throw new RangeError(`"${code}" is not a SAS missing-value code (., _ or A-Z)`);
  target[offset] = code.charCodeAt(0);
  target.fill(0, offset + 1, offset + IBM_FLOAT_BYTES);
}

/** Reads an 8-byte IBM double back (null for a SAS missing value); for tests and checks. */
export function readIbmFloat64(source: Uint8Array, offset: number): number | null {
  const first = source[offset];
  const rest = source.subarray(offset + 1, offset + IBM_FLOAT_BYTES);
  if ((first === 0x2e || first === 0x5f || (first >= 0x41 && first <= 0x5a)) && rest.every((byte) => byte === 0)) return null;
  const sign = first >>> 7 ? -1 : 1;
  const exponentOf16 = (first & 0x7f) - 64;
  const fractionHigh = (source[offset + 1] << 16) | (source[offset + 2] << 8) | source[offset + 3];
  const fractionLow = ((source[offset + 4] << 24) | (source[offset + 5] << 16) | (source[offset + 6] << 8) | source[offset + 7]) >>> 0;
  // 0.F = (high × 2^32 + low) / 2^56, computed in two exact steps.
  const fraction = fractionHigh / 2 ** 24 + fractionLow / 2 ** 56;
  return sign * fraction * 16 ** exponentOf16;
}
