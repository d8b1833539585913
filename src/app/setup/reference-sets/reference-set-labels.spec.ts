import { describe, expect, it } from '@jest/globals';

import type { ReferenceSpotCheck } from '@shared/contracts/reference-sets';
import { fileSizeText, shortSha256, spotCheckDifference } from './reference-set-labels';

describe('fileSizeText', () => {
  it.each([
    [512, '512 bytes'],
    [4_600, '4.6 kB'],
    // Size of the GLI Global lookup workbook as published (Bowerman 2023 supplement).
    [115_298, '115 kB'],
    [2_400_000, '2.4 MB'],
  ])('tells %d bytes as "%s"', (bytes, text) => {
    expect(fileSizeText(bytes)).toBe(text);
  });
});

describe('shortSha256', () => {
  it('keeps the first 12 hex digits and marks the cut', () => {
    expect(shortSha256('a'.repeat(12) + 'b'.repeat(52))).toBe('aaaaaaaaaaaa…');
  });
});

describe('spotCheckDifference', () => {
  const check = (expected: number, found: number | null, tolerance = 0.0005): ReferenceSpotCheck => ({
    description: 'Male, 25 y, 155 cm: FEV1 predicted',
    source: 'common practice',
    expected,
    found,
    tolerance,
    passed: found !== null && Math.abs(found - expected) <= tolerance,
  });

  it.each([
    [check(3.123, 3.123), 'identical'],
    [check(3.123, 3.1227483), 'differs by 0.00025 (accepted: 0.0005)'],
    [check(3.123, null), 'no value computed'],
  ])('describes %o as "%s"', (spot, text) => {
    expect(spotCheckDifference(spot)).toBe(text);
  });
});
