import { describe, expect, it } from '@jest/globals';
import { checkCalibration } from './calibration-check.js';

describe('syringe calibration check', () => {
  it.each([
    // ATS/ERS 2019 (Graham 2019): a 3.00 L syringe must read 2.91-3.09 L (+/-3 %).
    [3.0, true],
    [2.91, true],
    [3.09, true],
    [2.909, false],
    [3.091, false],
    [2.8, false],
    [Number.NaN, false],
  ])('reading %p L passes: %p', (measuredVolumeL, passed) => {
    expect(checkCalibration(measuredVolumeL).passed).toBe(passed);
  });

  it('reports the limits and the deviation', () => {
    // ATS/ERS 2019: limits 2.91 and 3.09 L for a 3.00 L syringe.
    const check = checkCalibration(3.06);
    expect(check.lowerLimitL).toBeCloseTo(2.91, 12);
    expect(check.upperLimitL).toBeCloseTo(3.09, 12);
    expect(check.errorPercent).toBeCloseTo(2, 12);
    expect(check.message).toBe('Syringe 3.00 L read 3.060 L (+2.0 %); accepted 2.91-3.09 L: passed.');
  });

  it('takes the tolerance and syringe volume as parameters', () => {
    // common practice: a protocol may set a tighter tolerance or use a 1 L syringe.
    expect(checkCalibration(2.92, { tolerancePercent: 2.5 }).passed).toBe(false);
    expect(checkCalibration(2.93, { tolerancePercent: 2.5 }).passed).toBe(true);
    expect(checkCalibration(1.02, { syringeVolumeL: 1 }).passed).toBe(true);
    expect(() => checkCalibration(3, { syringeVolumeL: 0 })).toThrow(RangeError);
  });
});
