import { describe, expect, it } from '@jest/globals';
import { createNhanes3Equations, nhanes3AgeGroup } from './nhanes3.js';

describe('NHANES III', () => {
  it('uses the child equations below 20 y for males and below 18 y for females', () => {
    // Hankinson 1999: the child and adult equations meet at 20 y (males) and 18 y (females).
    expect(nhanes3AgeGroup('female', 17.9)).toBe('child');
    expect(nhanes3AgeGroup('female', 18)).toBe('adult');
    expect(nhanes3AgeGroup('female', 19)).toBe('adult');
    expect(nhanes3AgeGroup('male', 19)).toBe('child');
    expect(nhanes3AgeGroup('male', 19.99)).toBe('child');
    expect(nhanes3AgeGroup('male', 20)).toBe('adult');
  });

  it('has no parameters without imported coefficients, and names a missing row', () => {
    // common practice: an incomplete import must not give silent values. Coefficients here are
    // placeholders to exercise the lookup, not published values.
    expect(createNhanes3Equations({ quadratic: [], ratio: [] }).parameters).toEqual([]);
    const partial = createNhanes3Equations({
      quadratic: [
        { parameter: 'fev1', sex: 'male', ethnicity: 'caucasian', ageGroup: 'child', b0: 0, b1Age: 0, b2AgeSquared: 0, b3HeightCmSquaredPredicted: 1e-4, b3HeightCmSquaredLln: 8e-5 },
      ],
      ratio: [],
    });
    const child = partial.predict({ sex: 'male', ageYears: 12, heightCm: 150, ethnicity: 'caucasian' }, 'fev1');
    expect(child.predicted).toBeCloseTo(2.25, 12);
    // Derived SD (common practice, from memory): (predicted - LLN)/1.645; ULN by symmetry.
    expect(child.uln).toBeCloseTo(2.25 + (2.25 - 1.8), 12);
    expect(partial.predict({ sex: 'male', ageYears: 12, heightCm: 150, ethnicity: 'caucasian' }, 'fev1', 1.8).z).toBeCloseTo(-1.645, 12);
    expect(partial.predict({ sex: 'male', ageYears: 40, heightCm: 175, ethnicity: 'caucasian' }, 'fev1').reason).toMatch(
      /no fev1 adult row for caucasian males/,
    );
  });
});
