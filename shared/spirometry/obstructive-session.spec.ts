import { describe, expect, it } from '@jest/globals';
import { readFileSync } from 'node:fs';
import path from 'node:path';
import type { Grade, Recording } from './model.js';
import { resolveProtocol } from './protocol.js';
import { analyzeSession } from './session-analysis.js';
import { type EffortSpec, type GeneratedEffort, generateEffort, generateSession } from './synthetic/curve-generator.js';
import { obstructiveEffortSpec, obstructiveShapeValues } from './synthetic/obstructive-effort.js';

/**
 * Whole sessions of obstructive efforts: grades (ATS/ERS 2019 Table 10, engine.md section 4),
 * reported values (engine.md section 5), EOFE criterion 3, the submaximal blow and young children.
 */
const protocol = resolveProtocol(JSON.parse(readFileSync(path.resolve('protocols/ats-ers-2019.v1.json'), 'utf8')));

/**
 * Moderate COPD shape (synthetic/obstructive-effort.ts): PEF 4.5 L/s, FVC 3.0 L, tr 0.1 s, slow share 0.6,
 * slow tau 3.5 s. Closed form: FEV1 1.6953 L, FEV1/FVC 0.565, plateau 10.9 s after the start. Scaling
 * PEF and FVC by k scales the whole curve by k (the fast time constant depends on PEF/FVC only), so
 * FEV1 and FVC of an effort scaled by k are k times the base values.
 */
const BASE: EffortSpec = { pefLPerS: 4.5, fvcL: 3.0, riseTimeS: 0.1, slowFraction: 0.6, slowTauS: 3.5, blowDurationS: 16, sampleRateHz: 100, flowNoiseLPerS: 0.005 };

function effort(k: number, seed: number, extra: Partial<EffortSpec> = {}): GeneratedEffort {
  const signal = seed % 2 === 0 ? 'flow' : 'volume';
  return generateEffort({ ...BASE, pefLPerS: 4.5 * k, fvcL: 3.0 * k, signal, label: `effort-${seed}`, ...extra }, seed);
}

const recordings = (efforts: readonly GeneratedEffort[]): Recording[] => efforts.map((e) => e.recording);
const ADULT = { demographics: { ageYears: 64 } };

describe('grades of obstructive sessions (ATS/ERS 2019 Table 10: A/B within 0.150 L, C 0.200 L, D 0.250 L, E beyond or one)', () => {
  it('the base shape is obstructive: FEV1/FVC 0.565 by the closed form', () => {
    const values = obstructiveShapeValues({ pefLPerS: 4.5, fvcL: 3.0, riseTimeS: 0.1, slowFraction: 0.6, slowTauS: 3.5 });
    expect(values.fev1FvcRatio).toBeCloseTo(0.5651, 3);
    expect(values.plateauTimeS).toBeCloseTo(10.92, 1);
  });

  // [case, scale factors of the efforts, FEV1 grade, FVC grade]. FVC = 2.982 k L and FEV1 = 1.695 k L (16 s blows,
  // generator truth), so the two largest differ by 2.982 dk and 1.695 dk L; each difference is at least 18 mL from a band edge.
  const cases: [string, number[], Grade, Grade][] = [
    // FVC 45 mL, FEV1 25 mL apart, three acceptable -> A and A.
    ['three within 0.150 L', [1, 0.985, 0.97], 'A', 'A'],
    // FVC 179 mL -> C; FEV1 102 mL with only two acceptable -> B.
    ['two, FVC 0.179 L apart', [1, 0.94], 'B', 'C'],
    // FVC 224 mL -> D; FEV1 127 mL with three -> A.
    ['three, FVC 0.224 L apart', [1, 0.925, 0.91], 'A', 'D'],
    // FVC 298 mL -> E; FEV1 170 mL -> C.
    ['two, FVC 0.298 L apart', [1, 0.9], 'C', 'E'],
  ];
  it.each(cases)('%s (scale factors %p): FEV1 %s, FVC %s', (_name, factors, fev1Grade, fvcGrade) => {
    const efforts = factors.map((k, i) => effort(k, i + 1));
    const analysis = analyzeSession(recordings(efforts), protocol, ADULT);
    expect(analysis.efforts.map((e) => e.findings.map((f) => f.code))).toEqual(factors.map(() => []));
    expect(analysis.fev1.grade).toBe(fev1Grade);
    expect(analysis.fvc.grade).toBe(fvcGrade);
    // Reported values (ATS/ERS 2019): the largest acceptable FEV1 and FVC; here both from the largest blow,
    // within the Table 6 accuracy (3 % or 0.050 L; Miller 2005) of its exact values, and a tenth of it.
    const largest = efforts[0].truth;
    expect(analysis.reported.fvc?.effortIndex).toBe(0);
    expect(analysis.reported.fev1?.effortIndex).toBe(0);
    expect(Math.abs((analysis.reported.fvc?.valueL as number) - largest.fvcL)).toBeLessThan(0.005);
    expect(Math.abs((analysis.reported.fev1?.valueL as number) - largest.fev1L)).toBeLessThan(0.005);
    expect(analysis.reported.fev1FvcRatio).toBeCloseTo(largest.fev1L / largest.fvcL, 2);
  });

  it('one acceptable FVC (the other ended early, 0.48 L short, not within 0.150 L of the prior FVC): FVC E, FEV1 B', () => {
    // Early end at 4 s: FVC 2.50 of 2.98 L (generator truth). Table 7: EOFE missing -> FVC usable, FEV1 acceptable.
    const efforts = [effort(1, 1), effort(1, 2, { faults: ['early-end'], faultTimesS: { earlyEnd: 4 } })];
    const analysis = analyzeSession(recordings(efforts), protocol, ADULT);
    expect(analysis.efforts[1].verdicts.fvc.verdict).toBe('usable');
    expect(analysis.fvc.grade).toBe('E');
    expect(analysis.fvc.acceptableCount).toBe(1);
    // Both FEV1 acceptable and equal (an early end after 4 s does not touch the first second): two -> B.
    expect(analysis.fev1.grade).toBe('B');
  });

  it('no acceptable FVC, all usable (every blow ends early, each shorter than the last by more than 0.150 L): FVC U, FEV1 A', () => {
    // Early ends at 6, 3 and 2 s: FVC 2.72, 2.33 and 2.11 L (generator truth); none repeats the largest prior FVC.
    const efforts = [6, 3, 2].map((atS, i) => effort(1, i + 1, { faults: ['early-end'], faultTimesS: { earlyEnd: atS } }));
    const analysis = analyzeSession(recordings(efforts), protocol, ADULT);
    expect(analysis.efforts.map((e) => e.verdicts.fvc.verdict)).toEqual(['usable', 'usable', 'usable']);
    expect(analysis.fvc.grade).toBe('U');
    expect(analysis.reported.fvc?.fromUsable).toBe(true);
    expect(analysis.reported.fvc?.effortIndex).toBe(0);
    expect(analysis.fev1.grade).toBe('A');
  });

  it('nothing acceptable or usable (glottic closure in the first second every time): F and F', () => {
    const efforts = [1, 0.98].map((k, i) => effort(k, i + 1, { faults: ['glottic-first-second'] }));
    const analysis = analyzeSession(recordings(efforts), protocol, ADULT);
    expect(analysis.fev1.grade).toBe('F');
    expect(analysis.fvc.grade).toBe('F');
    expect(analysis.reported.fev1).toBeNull();
    expect(analysis.reported.fvc).toBeNull();
  });

  it('reports the largest acceptable FEV1 and the largest acceptable FVC from different efforts', () => {
    // Effort 1 (k = 1) coughs in the first second: its FEV1 is not acceptable (Table 7) though it is the largest
    // (the cough's burst returns the volume held back); its FVC stays acceptable and is the largest.
    const efforts = [effort(1, 1, { faults: ['cough-first-second'] }), effort(0.97, 2), effort(0.96, 3)];
    const analysis = analyzeSession(recordings(efforts), protocol, ADULT);
    expect(analysis.efforts[0].verdicts.fev1.verdict).toBe('not_acceptable');
    expect(analysis.efforts[0].verdicts.fvc.verdict).toBe('acceptable');
    expect(analysis.reported.fvc?.effortIndex).toBe(0);
    expect(analysis.reported.fev1?.effortIndex).toBe(1);
    expect(analysis.reported.fev1?.valueL).toBe(analysis.efforts[1].metrics.fev1L);
    expect(analysis.efforts[0].metrics.fev1L as number).toBeGreaterThan(analysis.reported.fev1?.valueL as number);
    // FEV1/FVC of the two reported values.
    expect(analysis.reported.fev1FvcRatio).toBeCloseTo((analysis.efforts[1].metrics.fev1L as number) / analysis.efforts[0].metrics.fvcL, 12);
    // Two acceptable FEV1 (1.645 and 1.628 L): B; three acceptable FVC within 0.150 L: A.
    expect(analysis.fev1.grade).toBe('B');
    expect(analysis.fvc.grade).toBe('A');
  });
});

describe('EOFE criterion 3 in a slow-emptying lung (ATS/ERS 2019, from memory: FVC within the repeatability tolerance of, or above, the largest prior FVC)', () => {
  it('an early end whose FVC repeats the largest prior FVC within 0.150 L has ended its expiration', () => {
    // Prior: a complete blow scaled 0.93 (FVC 2.77 L). Then a k = 1 blow that stops at 6 s (FVC 2.72 L, 0.06 L less):
    // no plateau and FET under 15 s, but within 0.150 L of the prior largest -> EOFE met, FVC acceptable.
    const efforts = [effort(0.93, 1), effort(1, 2, { faults: ['early-end'], faultTimesS: { earlyEnd: 6 } })];
    const analysis = analyzeSession(recordings(efforts), protocol, ADULT);
    const short = analysis.efforts[1];
    expect(short.metrics.endOfTest.plateau).toBe(false);
    expect(short.metrics.endOfTest.repeatsPriorFvc).toBe(true);
    expect(short.findings.map((f) => f.code)).toEqual([]);
    expect(short.verdicts.fvc.verdict).toBe('acceptable');
  });

  it('not when it falls short by more than 0.150 L, nor when it comes first (no prior FVC)', () => {
    // Stop at 4 s: FVC 2.50 L, 0.27 L below the prior 2.77 L.
    const shortBlow = effort(1, 2, { faults: ['early-end'], faultTimesS: { earlyEnd: 4 } });
    const after = analyzeSession(recordings([effort(0.93, 1), shortBlow]), protocol, ADULT);
    expect(after.efforts[1].metrics.endOfTest.repeatsPriorFvc).toBe(false);
    expect(after.efforts[1].findings.map((f) => f.code)).toEqual(['end-early']);
    expect(after.efforts[1].verdicts.fvc.verdict).toBe('usable');
    const repeating = effort(1, 3, { faults: ['early-end'], faultTimesS: { earlyEnd: 6 } });
    const first = analyzeSession(recordings([repeating, effort(0.93, 1)]), protocol, ADULT);
    expect(first.efforts[0].metrics.endOfTest.repeatsPriorFvc).toBe(false);
    expect(first.efforts[0].verdicts.fvc.verdict).toBe('usable');
    // The complete blow after it ends on its own plateau.
    expect(first.efforts[1].verdicts.fvc.verdict).toBe('acceptable');
  });
});

describe("submaximal blow: PEF below 85 % of the session's best PEF (common practice)", () => {
  it('over 10 obstructive sessions with 4 % PEF variation, only the weak blow (PEF x 0.7) is flagged', () => {
    const problems: string[] = [];
    for (let seed = 1; seed <= 10; seed++) {
      const base = obstructiveEffortSpec(seed, { sampleRateHz: 100 });
      const generated = generateSession(
        { efforts: 4, base, fvcSdL: 0.03, pefSdFraction: 0.04, perEffort: [undefined, undefined, { faults: ['submaximal'] }, undefined] },
        seed,
      );
      const analysis = analyzeSession(recordings(generated), protocol, ADULT);
      analysis.efforts.forEach((e, i) => {
        const flagged = e.findings.some((f) => f.code === 'blow-submaximal');
        if (flagged !== (i === 2)) problems.push(`session ${seed}, effort ${i + 1}: flagged ${flagged}, PEF ${e.metrics.pefLPerS.toFixed(2)}`);
        // The submaximal finding is the reader's judgement: it changes no verdict (outside Table 7).
        if (e.verdicts.fev1.verdict !== 'acceptable' || e.verdicts.fvc.verdict !== 'acceptable') problems.push(`session ${seed}, effort ${i + 1}: not acceptable`);
      });
    }
    expect(problems).toEqual([]);
  });
});

describe('young children (6 or under; ATS/ERS 2019, from memory): FEV0.75 for the first-second criteria, 0.100 L or 10 % tolerances', () => {
  // A small, fast-emptying child blow: PEF 2.2 L/s, FVC 1.1 L, tr 0.05 s, slow share 0.1, tau 0.6 s (FEV1/FVC 0.88).
  const CHILD: EffortSpec = { pefLPerS: 2.2, fvcL: 1.1, riseTimeS: 0.05, slowFraction: 0.1, slowTauS: 0.6, blowDurationS: 6, sampleRateHz: 100, flowNoiseLPerS: 0.005 };
  const child = (k: number, seed: number, extra: Partial<EffortSpec> = {}): Recording =>
    generateEffort({ ...CHILD, pefLPerS: 2.2 * k, fvcL: 1.1 * k, label: `child-${seed}`, ...extra }, seed).recording;

  it('a cough at 0.85 s fails FEV1 but not FEV0.75; a cough at 0.45 s fails both', () => {
    const analysis = analyzeSession(
      [child(1, 1, { faults: ['cough-first-second'], faultTimesS: { coughFirstSecond: 0.85 } }), child(1, 2, { faults: ['cough-first-second'] })],
      protocol,
      { demographics: { ageYears: 5 } },
    );
    const [late, early] = analysis.efforts;
    expect(late.findings.map((f) => f.code)).toEqual(['cough-first-second']);
    expect([late.verdicts.fev1.verdict, late.verdicts.fev075?.verdict, late.verdicts.fvc.verdict]).toEqual(['not_acceptable', 'acceptable', 'acceptable']);
    expect([early.verdicts.fev1.verdict, early.verdicts.fev075?.verdict, early.verdicts.fvc.verdict]).toEqual(['not_acceptable', 'not_acceptable', 'acceptable']);
    expect(analysis.fev075?.acceptableCount).toBe(1);
    expect(analysis.reportedFev075L).toBe(late.metrics.fev075L);
  });

  it('FVC 1.10 and 0.97 L (0.132 L apart): C for a child of 5 (10 % of 1.10 L = 0.110 L), B for an adult (0.150 L)', () => {
    const efforts = [child(1, 1), child(0.88, 2)];
    const young = analyzeSession(efforts, protocol, { demographics: { ageYears: 5 } });
    expect(young.fvc.childTolerances).toBe(true);
    expect(young.fvc.tolerancesMl.ab).toBeCloseTo(0.1 * (young.fvc.largestL as number) * 1000, 6);
    expect(young.fvc.grade).toBe('C');
    const adult = analyzeSession(efforts, protocol, { demographics: { ageYears: 7 } });
    expect(adult.fvc.grade).toBe('B');
  });
});
