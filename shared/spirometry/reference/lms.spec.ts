import { describe, expect, it } from '@jest/globals';
import { LLN_Z, lmsLowerLimit, lmsUpperLimit, lmsValueAtZ, lmsZScore, percentPredicted } from './lms.js';

describe('LMS method', () => {
  it('reduces to a normal distribution with SD = M x S when L = 1', () => {
    // Cole TJ, Green PJ. Stat Med 1992;11:1305-19: L = 1 is the normal case.
    const lms = { l: 1, m: 4, s: 0.1 };
    expect(lmsLowerLimit(lms)).toBeCloseTo(4 - 1.645 * 0.4, 12);
    expect(lmsUpperLimit(lms)).toBeCloseTo(4 + 1.645 * 0.4, 12);
    expect(lmsZScore(lms, 3.6)).toBeCloseTo(-1, 12);
  });

  it('reduces to a log-normal distribution when L = 0', () => {
    // Cole & Green 1992: the L -> 0 limit of the Box-Cox transform is the logarithm.
    const lms = { l: 0, m: 2, s: 0.2 };
    expect(lmsLowerLimit(lms)).toBeCloseTo(2 * Math.exp(-1.645 * 0.2), 12);
    expect(lmsZScore(lms, 2 * Math.exp(0.2))).toBeCloseTo(1, 12);
  });

  it('approaches the L = 0 values continuously as L shrinks', () => {
    // Cole & Green 1992: the transform is continuous in L.
    const near = { l: 1e-6, m: 2, s: 0.2 };
    const zero = { l: 0, m: 2, s: 0.2 };
    expect(lmsLowerLimit(near)).toBeCloseTo(lmsLowerLimit(zero) as number, 6);
    expect(lmsZScore(near, 1.5)).toBeCloseTo(lmsZScore(zero, 1.5) as number, 5);
  });

  it('inverts: the value at a z-score has that z-score, for skewed L as in GLI FEV1/FVC', () => {
    // Quanjer 2012: z = ((y/M)^L - 1)/(L S) and y = M (1 + z L S)^(1/L) are inverses.
    for (const lms of [
      { l: 3.2, m: 0.82, s: 0.07 },
      { l: -0.6, m: 3.1, s: 0.13 },
      { l: 0.9, m: 4.5, s: 0.11 },
    ]) {
      for (const z of [-3, LLN_Z, 0, 1.2]) {
        expect(lmsZScore(lms, lmsValueAtZ(lms, z) as number)).toBeCloseTo(z, 10);
      }
      expect(lmsZScore(lms, lms.m)).toBeCloseTo(0, 12);
    }
  });

  it('returns null for measurements that are not positive', () => {
    // common practice: z is undefined for y <= 0 when L is not an integer.
    expect(lmsZScore({ l: 0.5, m: 3, s: 0.1 }, 0)).toBeNull();
    expect(lmsZScore({ l: 0.5, m: 3, s: 0.1 }, Number.NaN)).toBeNull();
  });

  it('gives percent predicted as 100 y / M', () => {
    // Quanjer 2012: %pred = 100 x measured / predicted.
    expect(percentPredicted(4, 3)).toBe(75);
  });
});
