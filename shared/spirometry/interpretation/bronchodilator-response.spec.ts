import { describe, expect, it } from '@jest/globals';
import { assessBronchodilatorResponse, assessParameterResponse } from './bronchodilator-response.js';

describe('bronchodilator response', () => {
  it('ERS/ATS 2022: pre 2.5 L, post 3.0 L, predicted 4.0 L is 12.5 % of predicted, significant', () => {
    // Stanojevic 2022 criterion (> 10 % of predicted); worked by hand: (3.0 - 2.5) / 4.0 = 12.5 %.
    const response = assessParameterResponse('ers-ats-2022', { preL: 2.5, postL: 3.0, predictedL: 4.0 });
    expect(response.changePercentOfPredicted).toBeCloseTo(12.5, 12);
    expect(response.significant).toBe(true);
  });

  it.each([
    // Stanojevic 2022: strictly more than 10 % of predicted.
    [2.5, 2.9, 4.0, false], // exactly 10 %
    [2.5, 2.91, 4.0, true],
    [3.0, 2.7, 4.0, false],
  ])('ERS/ATS 2022: %p -> %p L, predicted %p L: significant %p', (preL, postL, predictedL, significant) => {
    expect(assessParameterResponse('ers-ats-2022', { preL, postL, predictedL }).significant).toBe(significant);
  });

  it.each([
    // Pellegrino 2005 Table 9: >= 12 % of baseline and >= 200 mL.
    [2.0, 2.24, true], // 12 %, 240 mL
    [2.5, 2.8, true], // exactly 12 %, 300 mL
    [1.0, 1.15, false], // 15 % but 150 mL
    [3.0, 3.2, false], // 200 mL but 6.7 %
    [1.5, 1.7, true], // 13.3 %, exactly 200 mL
  ])('ATS/ERS 2005: %p -> %p L: significant %p', (preL, postL, significant) => {
    expect(assessParameterResponse('ats-ers-2005', { preL, postL }).significant).toBe(significant);
  });

  it('counts a response in FEV1 or FVC and says which criterion it used', () => {
    // Stanojevic 2022: > 10 % in FEV1 or FVC.
    const result = assessBronchodilatorResponse('ers-ats-2022', {
      fev1: { preL: 2.5, postL: 2.6, predictedL: 4.0 },
      fvc: { preL: 3.5, postL: 4.0, predictedL: 4.8 },
    });
    expect(result.fev1?.significant).toBe(false);
    expect(result.fvc?.significant).toBe(true);
    expect(result.significant).toBe(true);
    expect(result.text).toMatch(/^Significant bronchodilator response by ERS\/ATS 2022/);
    expect(result.text).toContain('FVC changed by 500 mL (10.4 % of predicted): significant.');
  });

  it('cannot apply the 2022 criterion without a predicted value', () => {
    // Stanojevic 2022: the change is expressed relative to the predicted value.
    const result = assessBronchodilatorResponse('ers-ats-2022', { fev1: { preL: 2.5, postL: 3.0 } });
    expect(result.significant).toBeNull();
    expect(result.fev1?.reason).toMatch(/needs a predicted value/);
  });
});
