import { describe, expect, it } from '@jest/globals';
import { readFileSync } from 'node:fs';
import path from 'node:path';
import type { Recording } from './model.js';
import { resolveProtocol } from './protocol.js';
import { ecsc1993Equations } from './reference/ecsc-1993.js';
import { analyzeSession } from './session-analysis.js';
import { generateSession } from './synthetic/curve-generator.js';

const protocol = resolveProtocol(JSON.parse(readFileSync(path.resolve('protocols/ats-ers-2019.v1.json'), 'utf8')));

/**
 * Analytic test curve (our own construction from the ATS/ERS definitions, solved in closed form): flow rises
 * linearly to PEF over riseS, then decays with time constant tauS; FVC = PEF (tr/2 + tau).
 * Sampled as volume after a 0.5 s flat lead-in, for `durationS` after the start of the blow.
 */
function analyticEffort(label: string, pefLPerS: number, options: { tauS?: number; durationS?: number; rateHz?: number } = {}): Recording {
  const { tauS = 0.6, durationS = 12, rateHz = 100 } = options;
  const riseS = 0.1;
  const leadInS = 0.5;
  const count = Math.round((leadInS + durationS) * rateHz) + 1;
  const values = new Float64Array(count);
  for (let i = 0; i < count; i++) {
    const t = i / rateHz - leadInS;
    values[i] =
      t <= 0 ? 0 : t <= riseS ? (pefLPerS * t * t) / (2 * riseS) : (pefLPerS * riseS) / 2 + pefLPerS * tauS * (1 - Math.exp(-(t - riseS) / tauS));
  }
  return { signal: 'volume', sampleRateHz: rateHz, startTimeS: 0, values, label };
}

describe('session analysis on closed-form analytic curves', () => {
  it('grades three repeatable efforts A and reports the largest acceptable values', () => {
    // FVC 5.200 / 5.135 / 5.070 L: 65 mL between the two largest -> grade A (Graham BL et al. 2019, Table 10).
    const analysis = analyzeSession([analyticEffort('e1', 7.9), analyticEffort('e2', 8), analyticEffort('e3', 7.8)], protocol, {
      demographics: { ageYears: 40 },
    });
    expect(analysis.efforts.map((effort) => effort.verdicts.fvc.verdict)).toEqual(['acceptable', 'acceptable', 'acceptable']);
    expect(analysis.fev1.grade).toBe('A');
    expect(analysis.fvc.grade).toBe('A');
    expect(analysis.reported.fvc?.effortIndex).toBe(1);
    expect(analysis.reported.fev1?.effortIndex).toBe(1);
    // Closed form for PEF 8, tr 0.1, tau 0.6: FVC = PEF (tr/2 + tau) = 5.200000, FEV1 = 4.214610; ATS/ERS 2005 Table 6 accuracy 3 % or 0.050 L.
    expect(Math.abs((analysis.reported.fvc?.valueL as number) - 5.2)).toBeLessThanOrEqual(0.05);
    expect(Math.abs((analysis.reported.fev1?.valueL as number) - 4.21461)).toBeLessThanOrEqual(0.05);
    expect(analysis.reported.bestEffortIndex).toBe(1);
    expect(analysis.predicted).toBeNull();
    expect(analysis.notes).toEqual([]);
    expect(analysis.endpoint).toEqual({ fev1: true, fvc: true, reasons: [] });
  });

  it('EOFE criterion 3: a short blow that repeats the largest prior FVC has ended its expiration', () => {
    // Truncated 3.5 s into a tau 0.6 s curve: V = 0.4 + 4.8 (1 - e^(-3.4/0.6)) = 5.183 L, still rising 0.071 L in the last
    // second (> 0.025 L, no plateau) but within 0.150 L of the prior 5.200 L (Graham BL et al. 2019, from memory).
    const full = analyticEffort('full', 8);
    const short = analyticEffort('short', 8, { durationS: 3.5 });
    const after = analyzeSession([full, short], protocol, { demographics: { ageYears: 40 } });
    expect(after.efforts[1].metrics.endOfTest.plateau).toBe(false);
    expect(after.efforts[1].metrics.endOfTest.repeatsPriorFvc).toBe(true);
    expect(after.efforts[1].metrics.endOfTest.met).toBe(true);
    expect(after.efforts[1].findings.map((finding) => finding.code)).not.toContain('end-early');
    expect(after.efforts[1].verdicts.fvc.verdict).toBe('acceptable');

    // The same short blow first has no prior FVC to repeat: its FVC is only usable (Table 7, EOFE row).
    const before = analyzeSession([short, full], protocol, { demographics: { ageYears: 40 } });
    expect(before.efforts[0].metrics.endOfTest.met).toBe(false);
    expect(before.efforts[0].findings.map((finding) => finding.code)).toContain('end-early');
    expect(before.efforts[0].verdicts.fvc.verdict).toBe('usable');
    expect(before.efforts[0].verdicts.fev1.verdict).toBe('acceptable');
  });

  it('flags a blow whose PEF is well below the best of the session', () => {
    // PEF 6 of best 8 = 75 % < 85 % (protocol rule findings.submaximal-pef-fraction, common practice).
    const analysis = analyzeSession([analyticEffort('strong', 8), analyticEffort('weak', 6)], protocol);
    expect(analysis.efforts[0].findings.map((finding) => finding.code)).not.toContain('blow-submaximal');
    const weak = analysis.efforts[1].findings.find((finding) => finding.code === 'blow-submaximal');
    expect(weak?.values['fractionOfBest']).toBeCloseTo(0.75, 1);
  });

  it('grades U and reports the usable value when no FVC is acceptable', () => {
    // Graham BL et al. 2019, Table 10: U = no acceptable, at least one usable; reported values then come from usable efforts.
    const analysis = analyzeSession([analyticEffort('short', 8, { durationS: 3 })], protocol);
    expect(analysis.fvc.grade).toBe('U');
    expect(analysis.reported.fvc?.fromUsable).toBe(true);
    expect(analysis.fev1.grade).toBe('E');
    expect(analysis.endpoint.fvc).toBe(false);
  });

  it('notes more efforts than the adult maximum of 8', () => {
    // Graham BL et al. 2019: at most 8 efforts in adults.
    const efforts = Array.from({ length: 9 }, (_, i) => analyticEffort(`e${i + 1}`, 8 - i * 0.01));
    const analysis = analyzeSession(efforts, protocol, { demographics: { ageYears: 50 } });
    expect(analysis.notes.some((note) => note.includes('more than the 8'))).toBe(true);
  });

  it('adds predicted values of the reported results with the equations given', () => {
    // Quanjer PH et al. 1993 (ECSC/ERS), FEV1 male: 4.30 H(m) - 0.029 age - 2.49.
    const analysis = analyzeSession([analyticEffort('e1', 8), analyticEffort('e2', 7.95)], protocol, {
      demographics: { ageYears: 40, heightCm: 175, sex: 'male' },
      equations: ecsc1993Equations,
    });
    const fev1 = analysis.predicted?.fev1;
    expect(fev1?.predicted).toBeCloseTo(4.3 * 1.75 - 0.029 * 40 - 2.49, 6);
    expect(fev1?.percentPredicted).toBeCloseTo((100 * (analysis.reported.fev1?.valueL as number)) / (fev1?.predicted as number), 9);
    expect(analysis.predicted?.fev1Fvc?.predicted).not.toBeNull();
  });

  it('uses the child tolerances and grades FEV0.75 for age 6 or under', () => {
    // Small analytic blows: PEF 2.0 and 1.75 L/s, tau 0.6 s -> FVC 1.300 and 1.1375 L, about 162 mL apart. Age 5: tolerances
    // 0.100 / 0.150 / 0.200 L or 10 % of 1.300 L (130 mL), whichever is greater -> D; adult 0.150 / 0.200 -> C
    // (Graham BL et al. 2019, Table 10).
    const efforts = [analyticEffort('c1', 2.0), analyticEffort('c2', 1.75)];
    const child = analyzeSession(efforts, protocol, { demographics: { ageYears: 5 } });
    expect(child.fvc.childTolerances).toBe(true);
    expect(child.fvc.differenceMl).toBeGreaterThan(150);
    expect(child.fvc.differenceMl).toBeLessThanOrEqual(200);
    expect(child.fvc.grade).toBe('D');
    expect(child.fev075).not.toBeNull();
    expect(child.reportedFev075L).not.toBeNull();
    const adult = analyzeSession(efforts, protocol, { demographics: { ageYears: 30 } });
    expect(adult.fvc.grade).toBe('C');
    expect(adult.fev075).toBeNull();
  });
});

describe('session analysis on generated sessions (synthetic physiological curves with exact values)', () => {
  /** ATS/ERS 2005 (Miller MR et al.), Table 6: volumes within 3 % of reading or 0.050 L. */
  const withinAccuracy = (measuredL: number, expectedL: number): boolean => Math.abs(measuredL - expectedL) <= Math.max(0.03 * expectedL, 0.05);

  it('three clean efforts: all acceptable, grade A, reported FVC the largest generated FVC', () => {
    const generated = generateSession({ efforts: 3, base: { sampleRateHz: 100 } }, 3);
    const analysis = analyzeSession(generated.map((effort) => effort.recording), protocol, { demographics: { ageYears: 40 } });
    expect(analysis.efforts.every((effort) => effort.verdicts.fev1.verdict === 'acceptable' && effort.verdicts.fvc.verdict === 'acceptable')).toBe(true);
    // Generated FVCs 5.030 / 5.007 / 5.030 L: within 0.150 L -> A (Graham BL et al. 2019, Table 10).
    expect(analysis.fvc.grade).toBe('A');
    expect(analysis.fev1.grade).toBe('A');
    const largestFvcL = Math.max(...generated.map((effort) => effort.truth.fvcL));
    expect(withinAccuracy(analysis.reported.fvc?.valueL as number, largestFvcL)).toBe(true);
  });

  it('faulty efforts: a late glottic stop leaves FVC usable, a weak blow is flagged submaximal', () => {
    const generated = generateSession(
      { efforts: 4, base: { sampleRateHz: 100 }, perEffort: [undefined, { faults: ['glottic-late'] }, { faults: ['submaximal'] }, undefined] },
      4,
    );
    const analysis = analyzeSession(generated.map((effort) => effort.recording), protocol, { demographics: { ageYears: 40 } });
    // Table 7 (Graham BL et al. 2019, from memory): glottic closure after 1 s -> FVC not acceptable but usable; FEV1 unaffected.
    expect(analysis.efforts[1].findings.map((finding) => finding.code)).toContain('glottic-stop-late');
    expect(analysis.efforts[1].verdicts.fvc.verdict).toBe('usable');
    expect(analysis.efforts[1].verdicts.fev1.verdict).toBe('acceptable');
    // Submaximal: PEF below 85 % of the session's best (common practice).
    expect(analysis.efforts[2].findings.map((finding) => finding.code)).toContain('blow-submaximal');
    // The usable FVC (4.52 L) is never reported while acceptable ones exist (ATS/ERS 2019 reported values).
    expect(analysis.reported.fvc?.fromUsable).toBe(false);
    expect(analysis.reported.fvc?.effortIndex).not.toBe(1);
  });

  it('poorly repeatable FVC: grade E when the two largest differ by more than 0.250 L', () => {
    // Generated FVCs 5.169 / 4.623 / 4.841 L: two largest 0.328 L apart -> E (Graham BL et al. 2019, Table 10).
    const generated = generateSession({ efforts: 3, base: { sampleRateHz: 100 }, fvcSdL: 0.4 }, 9);
    const analysis = analyzeSession(generated.map((effort) => effort.recording), protocol, { demographics: { ageYears: 40 } });
    expect(analysis.fvc.acceptableCount).toBe(3);
    expect(analysis.fvc.differenceMl).toBeGreaterThan(250);
    expect(analysis.fvc.grade).toBe('E');
  });
});
