import { describe, expect, it } from '@jest/globals';
import { compareReads, effortLabel, pickFinalRead, signedPairOf, type ComparableRead, type FinalReadCandidate } from './read-comparison.js';

type Verdict = 'acceptable' | 'usable' | 'not_acceptable';

function read(verdicts: [Verdict, Verdict][], result: Partial<ComparableRead['result']> = {}): ComparableRead {
  return {
    verdicts: verdicts.map(([fev1Verdict, fvcVerdict], effortIndex) => ({ effortIndex, fev1Verdict, fvcVerdict })),
    result: {
      fev1Grade: 'A',
      fvcGrade: 'A',
      fev1EffortIndex: 0,
      fvcEffortIndex: 0,
      reportedFev1L: 2.95,
      reportedFvcL: 3.81,
      ...result,
    },
  };
}

const threeAcceptable: [Verdict, Verdict][] = [
  ['acceptable', 'acceptable'],
  ['acceptable', 'acceptable'],
  ['acceptable', 'acceptable'],
];

// The agreement rule is common practice for blinded dual reads (see read-comparison.ts).
describe('compareReads', () => {
  it.each([
    { case: 'identical reads agree', a: read(threeAcceptable), b: read(threeAcceptable), differences: [] },
    {
      case: 'one FVC verdict differs',
      a: read(threeAcceptable),
      b: read([threeAcceptable[0], ['acceptable', 'usable'], threeAcceptable[2]]),
      differences: ['Effort 2 FVC: Read A acceptable, Read B usable'],
    },
    {
      case: 'FEV1 and FVC verdicts of one effort differ, in effort order then FEV1 before FVC',
      a: read([
        ['acceptable', 'acceptable'],
        ['acceptable', 'acceptable'],
        ['not_acceptable', 'usable'],
      ]),
      b: read([
        ['acceptable', 'acceptable'],
        ['usable', 'acceptable'],
        ['acceptable', 'not_acceptable'],
      ]),
      differences: [
        'Effort 2 FEV1: Read A acceptable, Read B usable',
        'Effort 3 FEV1: Read A not acceptable, Read B acceptable',
        'Effort 3 FVC: Read A usable, Read B not acceptable',
      ],
    },
    {
      case: 'same verdicts, different grade',
      a: read(threeAcceptable, { fvcGrade: 'A' }),
      b: read(threeAcceptable, { fvcGrade: 'C' }),
      differences: ['FVC grade: Read A A, Read B C'],
    },
    {
      case: 'same verdicts and grades, FEV1 reported from another effort (a selection override)',
      a: read(threeAcceptable, { fev1EffortIndex: 0, reportedFev1L: 2.95 }),
      b: read(threeAcceptable, { fev1EffortIndex: 1, reportedFev1L: 2.9 }),
      differences: ['Reported FEV1: Read A Effort 1 (2.95 L), Read B Effort 2 (2.90 L)'],
    },
    {
      case: 'one read reports no FVC',
      a: read(threeAcceptable),
      b: read(threeAcceptable, { fvcEffortIndex: null, reportedFvcL: null }),
      differences: ['Reported FVC: Read A Effort 1 (3.81 L), Read B none reported'],
    },
    {
      case: 'an effort judged in only one read',
      a: read(threeAcceptable),
      b: read(threeAcceptable.slice(0, 2)),
      differences: ['Effort 3: Read B has no verdict'],
    },
  ])('$case', ({ a, b, differences }) => {
    const comparison = compareReads(a, b);
    expect(comparison.differences).toEqual(differences);
    expect(comparison.agree).toBe(differences.length === 0);
  });

  it('finds the same differences with the reads swapped, labels swapped', () => {
    const a = read(threeAcceptable, { fev1Grade: 'B' });
    const b = read([['usable', 'acceptable'], threeAcceptable[1], threeAcceptable[2]]);
    expect(compareReads(b, a).differences).toEqual(['Effort 1 FEV1: Read A usable, Read B acceptable', 'FEV1 grade: Read A A, Read B B']);
  });

  it('labels efforts from 1 for readers', () => {
    expect([0, 1, 9].map(effortLabel)).toEqual(['Effort 1', 'Effort 2', 'Effort 10']);
  });
});

type Kind = FinalReadCandidate['kind'];
type Status = FinalReadCandidate['status'];
const stored = (id: string, kind: Kind, status: Status, signedAt: string | null = null): FinalReadCandidate => ({ id, kind, status, signedAt });

describe('pickFinalRead and signedPairOf', () => {
  it.each([
    { case: 'no signed read: none', reads: [stored('r1', 'first', 'in-progress')], final: undefined },
    { case: 'single design: the one signed read', reads: [stored('r1', 'first', 'signed', '2026-01-02T10:00:00.000Z')], final: 'r1' },
    {
      case: 'agreeing pair: the earlier signed, whichever kind',
      reads: [stored('r1', 'first', 'signed', '2026-01-02T11:00:00.000Z'), stored('r2', 'second', 'signed', '2026-01-02T10:00:00.000Z')],
      final: 'r2',
    },
    {
      case: 'adjudicated: the signed adjudication read, even though signed last',
      reads: [
        stored('r1', 'first', 'signed', '2026-01-02T10:00:00.000Z'),
        stored('r2', 'second', 'signed', '2026-01-02T11:00:00.000Z'),
        stored('r3', 'adjudication', 'withdrawn'),
        stored('r4', 'adjudication', 'signed', '2026-01-03T09:00:00.000Z'),
      ],
      final: 'r4',
    },
    {
      case: 'adjudication in progress does not count',
      reads: [stored('r1', 'first', 'signed', '2026-01-02T10:00:00.000Z'), stored('r3', 'adjudication', 'in-progress')],
      final: 'r1',
    },
  ])('$case', ({ reads, final }) => {
    expect(pickFinalRead(reads)?.id).toBe(final);
  });

  it('pairs the signed first and second reads, ignoring released and unsigned ones', () => {
    const reads = [
      stored('w', 'first', 'withdrawn'),
      stored('a', 'first', 'signed', '2026-01-02T10:00:00.000Z'),
      stored('p', 'second', 'in-progress'),
    ];
    expect(signedPairOf(reads)).toBeUndefined();
    const b = stored('b', 'second', 'signed', '2026-01-02T11:00:00.000Z');
    expect(signedPairOf([...reads, b])?.map((read) => read.id)).toEqual(['a', 'b']);
  });
});
