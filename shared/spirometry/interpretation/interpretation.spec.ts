import { describe, expect, it } from '@jest/globals';
import { REVIEW_CAUTION, interpretSpirometry, severityFromFev1Z } from './interpretation.js';

describe('ERS/ATS 2022 interpretation', () => {
  it.each([
    // Stanojevic 2022 severity bands of the FEV1 z-score: mild -1.65 to -2.5, moderate -2.51 to -4.0, severe < -4.1.
    [-1.0, 'none'],
    [-1.645, 'none'],
    [-1.7, 'mild'],
    [-2.5, 'mild'],
    [-2.51, 'moderate'],
    [-4.0, 'moderate'],
    [-4.01, 'severe'],
  ] as const)('FEV1 z %p is %p', (z, severity) => {
    expect(severityFromFev1Z(z)).toBe(severity);
  });

  it.each([
    // Stanojevic 2022: obstruction when FEV1/FVC z < -1.645; severity from FEV1 z.
    [{ fev1FvcZ: -2.0, fev1Z: -2.0, fvcZ: -0.5 }, 'obstruction', 'mild'],
    [{ fev1FvcZ: -3.1, fev1Z: -3.3, fvcZ: -1.2 }, 'obstruction', 'moderate'],
    [{ fev1FvcZ: -4.0, fev1Z: -4.6, fvcZ: -2.5 }, 'obstruction', 'severe'],
    [{ fev1FvcZ: -1.8, fev1Z: -0.4, fvcZ: 0.3 }, 'obstruction', 'none'],
    // Exactly at the LLN is not below it.
    [{ fev1FvcZ: -1.645, fev1Z: -1.0, fvcZ: -1.0 }, 'normal', null],
    // Normal ratio with low FEV1 and FVC: preserved ratio, impaired spirometry (from memory: PRISm).
    [{ fev1FvcZ: -0.5, fev1Z: -2.2, fvcZ: -2.4 }, 'preserved-ratio-impaired', 'mild'],
    [{ fev1FvcZ: 0.2, fev1Z: 0.1, fvcZ: -0.3 }, 'normal', null],
    [{ fev1FvcZ: null, fev1Z: -3, fvcZ: -3 }, 'indeterminate', null],
    [{ fev1FvcZ: 0.2, fev1Z: null, fvcZ: 0.1 }, 'indeterminate', null],
  ] as const)('%p -> %p (%p)', (input, pattern, severity) => {
    const result = interpretSpirometry(input);
    expect(result.pattern).toBe(pattern);
    expect(result.severity).toBe(severity);
    // Common practice: the text always carries the caution that it supports, and does not replace, review by qualified staff.
    expect(result.text.endsWith(REVIEW_CAUTION)).toBe(true);
  });

  it('states the numbers behind an obstruction', () => {
    // Stanojevic 2022: report z-scores with the LLN at z = -1.645.
    const text = interpretSpirometry({ fev1FvcZ: -2.31, fev1Z: -2.8, fvcZ: -1.0 }).text;
    expect(text).toContain('FEV1/FVC z-score -2.31 is below the lower limit of normal');
    expect(text).toContain('Severity by FEV1 z-score -2.80: moderate');
    expect(text).toContain('supports, and does not replace, review by qualified staff');
  });
});
