import { describe, expect, it } from '@jest/globals';
import { agreementOf, contingencyTable, kappaFromTable, studyAgreement, type ReadForAgreement, type RatingPair } from './agreement.js';

/** Expands a contingency table (rows: rater A, columns: rater B) into rating pairs. */
function pairsFromTable<C extends string>(table: readonly (readonly number[])[], categories: readonly C[]): RatingPair<C>[] {
  return table.flatMap((row, i) => row.flatMap((count, j) => Array.from({ length: count }, () => ({ a: categories[i], b: categories[j] }))));
}

const THREE = ['x', 'y', 'z'] as const;
const TWO = ['yes', 'no'] as const;

describe('Cohen kappa against published worked examples', () => {
  it.each([
    {
      source: 'Cohen (1960), Educ Psychol Meas 20:37-46, p. 45 example (3 categories, n = 200); also the p. 45 test in dkpro-statistics Cohen1960Test',
      table: [
        [88, 14, 18],
        [10, 40, 10],
        [2, 6, 12],
      ],
      observed: 0.7,
      expected: 0.41,
      kappa: 0.492,
    },
    {
      source: 'Cohen (1960), p. 37 example (3 categories, n = 100): agreement below chance',
      table: [
        [25, 12, 3],
        [13, 2, 15],
        [12, 16, 2],
      ],
      observed: 0.29,
      expected: 0.35,
      kappa: -0.092,
    },
    {
      source: 'Wikipedia "Cohen\'s kappa", simple example (50 grant proposals, two readers, yes/no)',
      table: [
        [20, 5],
        [10, 15],
      ],
      observed: 0.7,
      expected: 0.5,
      kappa: 0.4,
    },
  ])('$source', ({ table, observed, expected, kappa }) => {
    const parts = kappaFromTable(table)!;
    expect(parts.observed).toBeCloseTo(observed, 2);
    expect(parts.expected).toBeCloseTo(expected, 2);
    expect(parts.kappa!).toBeCloseTo(kappa, 3);

    const categories = table.length === 3 ? THREE : TWO;
    const statistics = agreementOf<string>(pairsFromTable(table, categories), categories);
    expect(statistics.percentAgreement!).toBeCloseTo(observed * 100, 6);
    expect(statistics.kappa!).toBeCloseTo(kappa, 3);
  });
});

describe('agreementOf edge cases', () => {
  it.each([
    {
      case: 'perfect agreement over several categories gives kappa 1',
      pairs: [
        { a: 'x', b: 'x' },
        { a: 'y', b: 'y' },
        { a: 'z', b: 'z' },
        { a: 'x', b: 'x' },
      ],
      count: 4,
      percentAgreement: 100,
      kappa: 1,
    },
    {
      case: 'agreement exactly at chance gives kappa 0 (each rater 50/50, independent)',
      pairs: pairsFromTable(
        [
          [1, 1],
          [1, 1],
        ],
        ['x', 'y'],
      ),
      count: 4,
      percentAgreement: 50,
      kappa: 0,
    },
    {
      case: 'complete disagreement with balanced margins gives kappa -1',
      pairs: [
        { a: 'x', b: 'y' },
        { a: 'y', b: 'x' },
      ],
      count: 2,
      percentAgreement: 0,
      kappa: -1,
    },
    {
      case: 'both raters always choose the same single category: kappa is 0/0, so null',
      pairs: [
        { a: 'x', b: 'x' },
        { a: 'x', b: 'x' },
      ],
      count: 2,
      percentAgreement: 100,
      kappa: null,
    },
    { case: 'no data gives nulls', pairs: [], count: 0, percentAgreement: null, kappa: null },
  ] as const)('$case', ({ pairs, count, percentAgreement, kappa }) => {
    const statistics = agreementOf<string>([...pairs], THREE);
    expect(statistics.count).toBe(count);
    if (percentAgreement === null) expect(statistics.percentAgreement).toBeNull();
    else expect(statistics.percentAgreement!).toBeCloseTo(percentAgreement, 9);
    if (kappa === null) expect(statistics.kappa).toBeNull();
    else expect(statistics.kappa!).toBeCloseTo(kappa, 9);
  });

  it('is symmetric in the two raters', () => {
    const table = [
      [88, 14, 18],
      [10, 40, 10],
      [2, 6, 12],
    ];
    const pairs = pairsFromTable(table, THREE);
    const swapped = pairs.map((pair) => ({ a: pair.b, b: pair.a }));
    expect(agreementOf(swapped, THREE).kappa).toBeCloseTo(agreementOf(pairs, THREE).kappa!, 12);
  });

  it('counts the contingency table with rows for rater A and columns for rater B', () => {
    expect(
      contingencyTable(
        [
          { a: 'x', b: 'y' },
          { a: 'x', b: 'y' },
          { a: 'z', b: 'x' },
        ],
        THREE,
      ),
    ).toEqual([
      [0, 2, 0],
      [0, 0, 0],
      [1, 0, 0],
    ]);
  });

  it('refuses a rating outside the categories, naming it', () => {
    expect(() => contingencyTable([{ a: 'x', b: 'w' as 'x' }], THREE)).toThrow('Rating "w" is not one of the categories x, y, z');
  });
});

type V = 'acceptable' | 'usable' | 'not_acceptable';
function readBy(readerId: string, verdicts: [V, V][], grades: [string, string] = ['A', 'A']): ReadForAgreement {
  return {
    readerId,
    readerName: `Dr ${readerId}`,
    verdicts: verdicts.map(([fev1Verdict, fvcVerdict], effortIndex) => ({ effortIndex, fev1Verdict, fvcVerdict })),
    fev1Grade: grades[0],
    fvcGrade: grades[1],
  };
}

describe('studyAgreement', () => {
  it('has no numbers without compared sessions', () => {
    expect(studyAgreement([])).toEqual({
      comparedSessions: 0,
      comparedEfforts: 0,
      percentAgreement: null,
      kappa: null,
      gradeAgreementPercent: null,
      pairs: [],
    });
  });

  it('counts two verdict pairs per effort and two grade pairs per session, by hand', () => {
    // Session 1 (Zed first, Amy second): 3 efforts, all 6 verdicts agree; grades agree.
    // Session 2 (Amy first, Zed second): 3 efforts, Effort 2 FVC differs (acceptable/usable); FVC grade differs.
    // Session 3 (Amy first, Bob second): 2 efforts, Effort 1 FEV1 differs (usable/not_acceptable).
    const sessions = [
      {
        first: readBy('zed', [['acceptable', 'acceptable'], ['acceptable', 'acceptable'], ['usable', 'usable']]),
        second: readBy('amy', [['acceptable', 'acceptable'], ['acceptable', 'acceptable'], ['usable', 'usable']]),
      },
      {
        first: readBy('amy', [['acceptable', 'acceptable'], ['acceptable', 'acceptable'], ['not_acceptable', 'not_acceptable']], ['A', 'A']),
        second: readBy('zed', [['acceptable', 'acceptable'], ['acceptable', 'usable'], ['not_acceptable', 'not_acceptable']], ['A', 'C']),
      },
      {
        first: readBy('amy', [['usable', 'acceptable'], ['acceptable', 'acceptable']]),
        second: readBy('bob', [['not_acceptable', 'acceptable'], ['acceptable', 'acceptable']]),
      },
    ];
    const agreement = studyAgreement(sessions);
    expect(agreement.comparedSessions).toBe(3);
    expect(agreement.comparedEfforts).toBe(8);
    // 16 verdict pairs, 14 agree.
    expect(agreement.percentAgreement).toBeCloseTo((14 / 16) * 100, 9);
    // 6 grade pairs, 5 agree.
    expect(agreement.gradeAgreementPercent).toBeCloseTo((5 / 6) * 100, 9);
    // Table by hand (rows first read, columns second; acceptable, usable, not acceptable):
    // [[10, 1, 0], [0, 2, 1], [0, 0, 2]] → po = 14/16, margins A (11, 3, 2), B (10, 3, 3),
    // pe = (110 + 9 + 6) / 256 = 125/256, kappa = (224/256 - 125/256) / (131/256) = 99/131.
    expect(agreement.kappa).toBeCloseTo(99 / 131, 9);
    expect(agreement.pairs).toEqual([
      { readerA: 'Dr amy', readerB: 'Dr bob', comparedEfforts: 2, percentAgreement: 75, kappa: expect.any(Number) },
      { readerA: 'Dr amy', readerB: 'Dr zed', comparedEfforts: 6, percentAgreement: (11 / 12) * 100, kappa: expect.any(Number) },
    ]);
  });

  it('compares only efforts judged in both reads', () => {
    const agreement = studyAgreement([
      { first: readBy('amy', [['acceptable', 'acceptable'], ['usable', 'usable']]), second: readBy('bob', [['acceptable', 'acceptable']]) },
    ]);
    expect(agreement.comparedEfforts).toBe(1);
    expect(agreement.percentAgreement).toBe(100);
  });
});
