import { describe, expect, it } from '@jest/globals';
import type { ReadResult } from '../../shared/contracts/reading.js';
import { FINDING_CATALOGUE } from '../../shared/spirometry/finding-codes.js';
import type { FindingCode } from '../../shared/spirometry/model.js';
import { COACHING_BY_FINDING, coachingForEffort, coachingForSession } from './coaching-text.js';

/**
 * Each finding code and the gist of the coaching a site gets for it. The wording is ours; what
 * each finding means follows the catalogue (ATS/ERS 2019 (Graham et al. 2019), Table 7, and
 * common practice where the catalogue says so).
 */
const EXPECTED: readonly (readonly [FindingCode, RegExp])[] = [
  ['bev-excessive', /^Slow start: coach a faster, more forceful blast from full inspiration/],
  ['hesitation-long', /^Long pause before the blow: .*without delay/],
  ['end-early', /^Ended early: encourage the subject to keep blowing until told to stop/],
  ['cough-first-second', /^Cough in the first second: .*repeat the effort/],
  ['cough-late', /^Cough later in the blow: .*unbroken blow/],
  ['glottic-stop-first-second', /^Throat closed early in the blow: .*keep the throat open/],
  ['glottic-stop-late', /^Blow stopped abruptly: .*until told to stop/],
  ['blow-submaximal', /^Weaker blow than the subject's best: .*maximal effort/],
  ['peak-late', /^Peak flow came late: coach an explosive start/],
  ['zero-drift', /^Baseline drift: set the spirometer's zero while no air moves/],
  ['inspiration-during-blow', /^Breath in during the blow: coach one continuous blow out/],
  ['double-breath', /^Two blows in one recording: record one blow per effort/],
  ['fivc-exceeds-fvc', /^Not a full breath in before the blow: .*fill the lungs completely/],
];

describe('coaching words per finding code', () => {
  it.each(EXPECTED)('%s → %s', (code, expected) => {
    expect(COACHING_BY_FINDING[code]).toMatch(expected);
    expect(coachingForEffort([code], 'not_acceptable', 'not_acceptable')).toEqual([COACHING_BY_FINDING[code]]);
  });

  it('covers every code of the finding catalogue, and no other', () => {
    expect(EXPECTED.map(([code]) => code).sort()).toEqual(Object.keys(FINDING_CATALOGUE).sort());
    expect(Object.keys(COACHING_BY_FINDING).sort()).toEqual(Object.keys(FINDING_CATALOGUE).sort());
  });
});

describe('coaching for one effort', () => {
  it.each([
    { case: 'two findings, in order, each once', findings: ['end-early', 'bev-excessive', 'end-early'], fev1: 'acceptable', fvc: 'not_acceptable', lines: [COACHING_BY_FINDING['end-early'], COACHING_BY_FINDING['bev-excessive']] },
    { case: 'an acceptable effort without findings', findings: [], fev1: 'acceptable', fvc: 'acceptable', lines: [] },
    { case: 'an unknown code is skipped', findings: ['made-up-code'], fev1: 'acceptable', fvc: 'acceptable', lines: [] },
    { case: 'a judged-down effort with no known finding', findings: [], fev1: 'usable', fvc: 'not_acceptable', lines: ["FEV1 usable only, FVC not acceptable: see the over-reader's comment for what to change."] },
  ] as const)('$case', ({ findings, fev1, fvc, lines }) => {
    expect(coachingForEffort(findings, fev1, fvc)).toEqual(lines);
  });
});

describe('coaching for the session', () => {
  const result = (overrides: Partial<ReadResult>): ReadResult => ({
    fev1Grade: 'A',
    fvcGrade: 'A',
    reportedFev1L: 2.5,
    reportedFvcL: 3.5,
    fev1FvcRatio: 0.71,
    fev1EffortIndex: 0,
    fvcEffortIndex: 0,
    endpointEligible: { fev1: true, fvc: true, reasons: [] },
    ...overrides,
  });

  // Grades after ATS/ERS 2019 (Graham et al. 2019), Table 10: A-C repeatable enough, D and below not.
  it.each([
    { grades: ['A', 'A'], lines: 0, match: null },
    { grades: ['C', 'B'], lines: 0, match: null },
    { grades: ['D', 'A'], lines: 1, match: /at least three acceptable efforts/ },
    { grades: ['A', 'U'], lines: 1, match: /at least three acceptable efforts/ },
    { grades: ['F', 'F'], lines: 1, match: /No acceptable or usable effort/ },
  ] as const)('grades FEV1 $grades.0 and FVC $grades.1 give $lines line(s)', ({ grades, lines, match }) => {
    const coaching = coachingForSession(result({ fev1Grade: grades[0], fvcGrade: grades[1] }));
    expect(coaching).toHaveLength(lines);
    if (match) expect(coaching[0]).toMatch(match);
  });

  it('says which value cannot count for the endpoint, with the reasons', () => {
    const coaching = coachingForSession(
      result({ fvcGrade: 'E', endpointEligible: { fev1: true, fvc: false, reasons: ['FVC grade E is below the study minimum C'] } }),
    );
    expect(coaching.at(-1)).toBe('FVC cannot count for the study endpoint (FVC grade E is below the study minimum C).');
  });
});
