import { describe, expect, it } from '@jest/globals';
import { ecsc1993Equations } from './ecsc-1993.js';
import { demographicsProblem, predictAll } from './reference-equations.js';

describe('reference equations interface', () => {
  it('predicts every parameter of the set and any measured one', () => {
    // Quanjer 1993 ECSC equations: FVC (male) = 5.76 H - 0.026 A - 4.34 -> 4.7 L at 1.75 m, 40 y.
    const all = predictAll(ecsc1993Equations, { sex: 'male', ageYears: 40, heightCm: 175 }, { fvc: 4.7, fev6: 4.5 });
    expect(Object.keys(all).sort()).toEqual(['fef2575', 'fef75', 'fev1', 'fev1Fvc', 'fev6', 'fvc', 'pef']);
    expect(all.fvc?.predicted).toBeCloseTo(4.7, 10);
    expect(all.fvc?.percentPredicted).toBeCloseTo(100, 10);
    expect(all.fev1?.z).toBeNull();
    expect(all.fev6?.predicted).toBeNull();
    expect(all.fev6?.reason).toMatch(/no equation for FEV6/);
  });

  it('refuses non-positive or non-finite heights and ages but not implausible heights', () => {
    // GLI-2012 calculator output computes values even for deliberately implausible heights.
    expect(demographicsProblem({ sex: 'male', ageYears: 40, heightCm: 0 })).toMatch(/Height/);
    expect(demographicsProblem({ sex: 'male', ageYears: 40, heightCm: Number.POSITIVE_INFINITY })).toMatch(/Height/);
    expect(demographicsProblem({ sex: 'male', ageYears: Number.NaN, heightCm: 170 })).toMatch(/Age/);
    expect(demographicsProblem({ sex: 'male', ageYears: 40, heightCm: 230 })).toBeNull();
    expect(demographicsProblem({ sex: 'female', ageYears: 31, heightCm: 70 })).toBeNull();
  });
});
