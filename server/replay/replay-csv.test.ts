import { describe, expect, it } from '@jest/globals';
import type { ReplayResult } from '../../shared/contracts/protocols.js';
import { csvCell, replayCsv, replayCsvFileName } from './replay-csv.js';

const codes = (sessionId: string) => ({
  sessionId,
  siteNumber: '101',
  subjectCode: '101-001',
  visitCode: 'V2',
  timepointCode: 'PRE-DOSE',
  bronchodilator: 'pre' as const,
});

describe('replayCsv', () => {
  const base: ReplayResult = {
    id: 'r1',
    studyId: 'study-x',
    ranAt: '2026-05-01T10:00:00.000Z',
    ranBy: 'user-admin',
    current: { ref: 'ats-ers-2019@1', title: 'standard' },
    target: { ref: 'tight@1', title: 'tight' },
    counts: {
      sessionsReplayed: 1,
      efforts: 1,
      effortsChanged: 1,
      sessionsWithGradeChange: 1,
      sessionsWithEndpointChange: 0,
      storedVerdictsDiffering: 0,
      storedGradesDiffering: 0,
      sessionsWithProblems: 0,
    },
    verdictTransitions: [],
    effortChanges: [
      { ...codes('s1'), effortIndex: 0, effortLabel: 'effort-1', fev1: { from: 'acceptable', to: 'acceptable' }, fvc: { from: 'acceptable', to: 'not_acceptable' } },
    ],
    sessionChanges: [
      {
        ...codes('s1'),
        fev1Grade: { from: 'A', to: 'A' },
        fvcGrade: { from: 'A', to: 'C' },
        fev1Endpoint: { from: true, to: true },
        fvcEndpoint: { from: true, to: false },
      },
    ],
    problems: [{ ...codes('s2'), where: 'target', message: 'effort-1.csv: sampled at 50 Hz, below 100 Hz' }],
    elapsedMs: 3,
  };

  it('writes one row per changed value, and one per session not replayed', () => {
    expect(replayCsv(base).split('\r\n')).toEqual([
      'change,session_id,site,subject,visit,timepoint,bronchodilator,effort_number,effort_label,value,under_current,under_target,note',
      'effort verdict,s1,101,101-001,V2,PRE-DOSE,pre,1,effort-1,FVC,acceptable,not acceptable,current ats-ers-2019@1; target tight@1',
      'session grade,s1,101,101-001,V2,PRE-DOSE,pre,,,FVC,A,C,current ats-ers-2019@1; target tight@1',
      'endpoint eligible,s1,101,101-001,V2,PRE-DOSE,pre,,,FVC,yes,no,current ats-ers-2019@1; target tight@1',
      'not replayed,s2,101,101-001,V2,PRE-DOSE,pre,,,,,,"target: effort-1.csv: sampled at 50 Hz, below 100 Hz"',
      '',
    ]);
  });

  it('names the file after study, target and day', () => {
    expect(replayCsvFileName(base)).toBe('replay-study-x-tight-1-2026-05-01.csv');
  });

  it.each([
    ['plain', '101-001', '101-001'],
    ['a comma', 'a,b', '"a,b"'],
    ['a quote', 'say "hi"', '"say ""hi"""'],
    ['a formula', '=HYPERLINK("x")', `"'=HYPERLINK(""x"")"`],
    ['a leading minus', '-1+2', "'-1+2"],
    ['a leading at sign', '@SUM(A1)', "'@SUM(A1)"],
  ])('quotes and defuses cells: %s', (_what, cell, expected) => {
    expect(csvCell(cell)).toBe(expected);
  });
});
