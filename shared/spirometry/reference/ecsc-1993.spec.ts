import { describe, expect, it } from '@jest/globals';
import { ecsc1993Equations } from './ecsc-1993.js';

describe('ECSC/ERS 1993 equations', () => {
  it('computes FEV1 for a man of 1.75 m aged 40 y', () => {
    // Quanjer 1993: FEV1 = 4.30 H - 0.029 A - 2.49 (RSD 0.51 L, from memory).
    const value = ecsc1993Equations.predict({ sex: 'male', ageYears: 40, heightCm: 175 }, 'fev1', 3.365);
    expect(value.predicted).toBeCloseTo(3.875, 10);
    expect(value.lln).toBeCloseTo(3.875 - 1.645 * 0.51, 10);
    expect(value.uln).toBeCloseTo(3.875 + 1.645 * 0.51, 10);
    expect(value.z).toBeCloseTo(-1, 10);
  });

  it('gives FEV1/FVC as a fraction for a woman aged 50 y', () => {
    // Quanjer 1993: FEV1/VC % = -0.19 A + 89.10 -> 79.6 %.
    expect(ecsc1993Equations.predict({ sex: 'female', ageYears: 50, heightCm: 160 }, 'fev1Fvc').predicted).toBeCloseTo(0.796, 10);
  });

  it('uses age 25 y between 18 and 25 y', () => {
    // Quanjer 1993 (from memory): between 18 and 25 y, substitute 25 y in the equations.
    const at20 = ecsc1993Equations.predict({ sex: 'female', ageYears: 20, heightCm: 165 }, 'fvc');
    const at25 = ecsc1993Equations.predict({ sex: 'female', ageYears: 25, heightCm: 165 }, 'fvc');
    expect(at20.predicted).toBe(at25.predicted);
    // FVC (female) = 4.43 H - 0.026 A - 2.89 at 1.65 m, 25 y.
    expect(at25.predicted).toBeCloseTo(4.43 * 1.65 - 0.026 * 25 - 2.89, 10);
  });

  it('refuses ages outside 18-70 y and parameters it does not have', () => {
    // Quanjer 1993: adults 18-70 y.
    expect(ecsc1993Equations.predict({ sex: 'male', ageYears: 17.9, heightCm: 175 }, 'fev1').reason).toMatch(/outside the 18-70 y range/);
    expect(ecsc1993Equations.predict({ sex: 'male', ageYears: 70.5, heightCm: 175 }, 'fev1').predicted).toBeNull();
    expect(ecsc1993Equations.predict({ sex: 'male', ageYears: 40, heightCm: 175 }, 'fev6').reason).toMatch(/no equation for FEV6/);
  });
});
