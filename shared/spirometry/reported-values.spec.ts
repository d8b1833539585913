import { describe, expect, it } from '@jest/globals';
import type { EffortMetrics, Verdict } from './model.js';
import { selectBestEffort, selectReportedValues, type ReportableEffort } from './reported-values.js';

function effort(fev1L: number | null, fvcL: number, fev1Verdict: Verdict, fvcVerdict: Verdict, pefLPerS = 8): ReportableEffort {
  const metrics = {
    fev1L,
    fvcL,
    pefLPerS,
    fef2575LPerS: pefLPerS / 2,
    fev6L: fvcL - 0.01,
  } as Partial<EffortMetrics> as EffortMetrics;
  return { metrics, fev1Verdict, fvcVerdict };
}

describe('reported values (Graham BL et al. 2019, ATS/ERS, section on reported values)', () => {
  it('takes the largest acceptable FEV1 and the largest acceptable FVC, possibly from different efforts', () => {
    const reported = selectReportedValues([
      effort(3.4, 4.1, 'acceptable', 'acceptable', 7.9),
      effort(3.5, 4.0, 'acceptable', 'usable', 8.5),
      effort(3.3, 4.2, 'not_acceptable', 'acceptable', 7.1),
    ]);
    expect(reported.fev1).toEqual({ valueL: 3.5, effortIndex: 1, fromUsable: false });
    expect(reported.fvc).toEqual({ valueL: 4.2, effortIndex: 2, fromUsable: false });
    expect(reported.fev1FvcRatio).toBeCloseTo(3.5 / 4.2, 12);
  });

  it('never takes a larger usable value while an acceptable one exists', () => {
    const reported = selectReportedValues([effort(3.0, 4.0, 'acceptable', 'acceptable'), effort(3.6, 4.6, 'usable', 'usable')]);
    expect(reported.fev1?.valueL).toBe(3.0);
    expect(reported.fvc?.valueL).toBe(4.0);
  });

  it('falls back to usable values only when none is acceptable (grade U)', () => {
    const reported = selectReportedValues([effort(3.0, 4.0, 'usable', 'not_acceptable'), effort(3.1, 3.9, 'usable', 'usable')]);
    expect(reported.fev1).toEqual({ valueL: 3.1, effortIndex: 1, fromUsable: true });
    expect(reported.fvc).toEqual({ valueL: 3.9, effortIndex: 1, fromUsable: true });
  });

  it('reports nothing when no value is acceptable or usable (grade F)', () => {
    const reported = selectReportedValues([effort(3.0, 4.0, 'not_acceptable', 'not_acceptable')]);
    expect(reported.fev1).toBeNull();
    expect(reported.fvc).toBeNull();
    expect(reported.fev1FvcRatio).toBeNull();
    expect(reported.bestEffortIndex).toBeNull();
    expect(reported.pefLPerS).toBeNull();
  });

  it('takes PEF and FEF25-75 from the best test: the acceptable effort with the largest FEV1 + FVC', () => {
    // Miller MR et al. 2005 (ATS/ERS) "best test" = largest sum of FEV1 and FVC; for 2019 from memory.
    const efforts = [
      effort(3.4, 4.3, 'acceptable', 'acceptable', 9.0), // 7.7
      effort(3.6, 4.2, 'acceptable', 'acceptable', 8.0), // 7.8: best
      effort(3.9, 4.4, 'not_acceptable', 'usable', 10.0), // 8.3 but not acceptable
    ];
    const reported = selectReportedValues(efforts);
    expect(reported.bestEffortIndex).toBe(1);
    expect(reported.pefLPerS).toBe(8.0);
    expect(reported.fef2575LPerS).toBe(4.0);
    expect(selectBestEffort(efforts.slice(2))).toBe(0);
  });
});
