import { describe, expect, it } from '@jest/globals';
import { type GliLookupSet, type GliParameterTable, createGliEquations, gliLms, interpolateSplines } from './gli-tables.js';

const rows = [
  { ageYears: 10, mSpline: 0.1, sSpline: 0.2, lSpline: 0 },
  { ageYears: 10.25, mSpline: 0.3, sSpline: 0.1, lSpline: 0.4 },
  { ageYears: 10.5, mSpline: 0.5, sSpline: 0.0, lSpline: 0.8 },
];

describe('GLI lookup tables', () => {
  it('interpolates linearly between quarter-year rows instead of rounding to the nearest', () => {
    // Reference data notes (GLI-2012 calculator): linear interpolation between quarter-year ages.
    const at = interpolateSplines(rows, 10.1);
    expect(at?.mSpline).toBeCloseTo(0.1 + 0.4 * 0.2, 12);
    expect(at?.sSpline).toBeCloseTo(0.2 - 0.4 * 0.1, 12);
    expect(at?.lSpline).toBeCloseTo(0.4 * 0.4, 12);
    expect(interpolateSplines(rows, 10.25)?.mSpline).toBe(0.3);
    expect(interpolateSplines(rows, 10.5)?.lSpline).toBe(0.8);
    expect(interpolateSplines(rows, 10.6)).toBeNull();
    expect(interpolateSplines(rows, 9.9)).toBeNull();
  });

  it('builds M, S and L from coefficients, ethnic terms and splines as published', () => {
    // Quanjer 2012: M = exp(a0 + a1 ln(height) + a2 ln(age) + ethnic + Mspline), S = exp(p0 + p1 ln(age) + ethnic + Sspline),
    // L = q0 + q1 ln(age) + Lspline.
    const table: GliParameterTable = {
      coefficients: {
        mIntercept: -9,
        mLnHeight: 2,
        mLnAge: 0.1,
        mEthnic: { 'african-american': -0.15 },
        sIntercept: -2.3,
        sLnAge: 0.05,
        sEthnic: { 'african-american': 0.02 },
        lIntercept: 0.9,
        lLnAge: 0.01,
      },
      splines: rows,
    };
    const lms = gliLms(table, 10.25, 140, 'african-american');
    expect(lms?.m).toBeCloseTo(Math.exp(-9 + 2 * Math.log(140) + 0.1 * Math.log(10.25) - 0.15 + 0.3), 12);
    expect(lms?.s).toBeCloseTo(Math.exp(-2.3 + 0.05 * Math.log(10.25) + 0.02 + 0.1), 12);
    expect(lms?.l).toBeCloseTo(0.9 + 0.01 * Math.log(10.25) + 0.4, 12);
    const caucasian = gliLms(table, 10.25, 140, 'caucasian');
    expect((lms?.m ?? 0) / (caucasian?.m ?? 1)).toBeCloseTo(Math.exp(-0.15), 12);
  });

  it('gives reasons instead of values when the imported table is short or missing', () => {
    // common practice: never extrapolate beyond the table.
    const table: GliParameterTable = {
      coefficients: { mIntercept: -9, mLnHeight: 2, mLnAge: 0, mEthnic: {}, sIntercept: -2, sLnAge: 0, sEthnic: {}, lIntercept: 1, lLnAge: 0 },
      splines: rows,
    };
    const lookup: GliLookupSet = { female: { fev1: table }, male: {} };
    const equations = createGliEquations(
      { id: 'gli-global-2022', label: 'Test set', source: 'test', parameters: ['fev1'], ageRangeYears: { fev1: [3, 95] }, ethnicities: null },
      lookup,
    );
    expect(equations.predict({ sex: 'female', ageYears: 10.1, heightCm: 140 }, 'fev1').predicted).toBeGreaterThan(0);
    expect(equations.predict({ sex: 'female', ageYears: 12, heightCm: 140 }, 'fev1').reason).toMatch(/does not cover age 12 y/);
    expect(equations.predict({ sex: 'male', ageYears: 10.1, heightCm: 140 }, 'fev1').reason).toMatch(/no FEV1 table for males/);
    expect(equations.predict({ sex: 'female', ageYears: 10.1, heightCm: -1 }, 'fev1').reason).toMatch(/Height/);
  });
});
