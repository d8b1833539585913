/**
 * IBM hexadecimal floating point as SAS transport files hold numbers (SAS technical note TS-140).
 *
 * Each expected byte string follows from the format's definition, value = (-1)^s × 0.F × 16^(E − 64)
 * with the first hexadecimal digit of F non-zero (normalised):
 * - 1.0   = 0.1 (hex) × 16^1:  E = 65 = 0x41, F = 0x10000000000000  → 41 10 00 00 00 00 00 00
 * - -1.0  = the same with the sign bit set: 0x80 | 0x41 = 0xC1        → C1 10 00 00 00 00 00 00
 * - 0.5   = 0.8 (hex) × 16^0:  E = 64 = 0x40, F = 0x80000000000000  → 40 80 00 00 00 00 00 00
 * - 100   = 0x64 = 0.64 (hex) × 16^2: E = 66 = 0x42                 → 42 64 00 00 00 00 00 00
 * - 16    = 0.1 (hex) × 16^2: E = 0x42                               → 42 10 00 00 00 00 00 00
 * - 0.1   = the double nearest it, 0x3FB999999999999A = 1.999999999999A (hex) × 2^-4 = 0.1999999999999A (hex)
 *           × 16^0: the binary exponent −4 is a multiple of 4, so the 53 bits need no shift
 *           and F = 0x1999999999999A; E = 0x40                         → 40 19 99 99 99 99 99 9A
 * - 2.345 (a volume in litres) is checked by reading the bytes back (exact round trip).
 * - 0 is all zero bytes (TS-140); the ordinary missing value is "." (0x2E) then seven zeros.
 */
import { describe, expect, it } from '@jest/globals';
import { readIbmFloat64, toIbmFloat64, writeSasMissing } from './ibm-float.js';

const hex = (bytes: Uint8Array) => Buffer.from(bytes).toString('hex').toUpperCase().match(/../g)!.join(' ');

describe('IEEE double to IBM double', () => {
  it.each([
    [1, '41 10 00 00 00 00 00 00'],
    [-1, 'C1 10 00 00 00 00 00 00'],
    [0.5, '40 80 00 00 00 00 00 00'],
    [100, '42 64 00 00 00 00 00 00'],
    [16, '42 10 00 00 00 00 00 00'],
    [-100, 'C2 64 00 00 00 00 00 00'],
    [0.1, '40 19 99 99 99 99 99 9A'],
    [0, '00 00 00 00 00 00 00 00'],
    [-0, '00 00 00 00 00 00 00 00'],
  ])('%p → %s', (value, expected) => {
    expect(hex(toIbmFloat64(value))).toBe(expected);
  });

  it.each([2.345, 0.823, 123456.789, 1e-10, 6.02e23, -0.000123, 3.2e-60, 2 ** -200, 7e75, Number.MAX_SAFE_INTEGER])(
    'reads %p back exactly (the conversion loses no bit)',
    (value) => {
      expect(readIbmFloat64(toIbmFloat64(value), 0)).toBe(value);
    },
  );

  it('writes values below the smallest IBM magnitude (16^-65) as zero, and refuses what the format cannot hold', () => {
    expect(hex(toIbmFloat64(1e-300))).toBe('00 00 00 00 00 00 00 00');
    expect(() => toIbmFloat64(1e76)).toThrow(/too large/);
    expect(() => toIbmFloat64(Number.NaN)).toThrow(RangeError);
    expect(() => toIbmFloat64(Number.POSITIVE_INFINITY)).toThrow(RangeError);
  });

  it('writes the SAS missing values as their code then seven zero bytes, and reads them as null', () => {
    const bytes = new Uint8Array(16);
    writeSasMissing(bytes, 0);
    writeSasMissing(bytes, 8, 'A');
    expect(hex(bytes)).toBe('2E 00 00 00 00 00 00 00 41 00 00 00 00 00 00 00');
    expect(readIbmFloat64(bytes, 0)).toBeNull();
    expect(readIbmFloat64(bytes, 8)).toBeNull();
    expect(() => writeSasMissing(bytes, 0, 'a')).toThrow(/missing-value code/);
  });
});
