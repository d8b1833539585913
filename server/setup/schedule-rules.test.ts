import { describe, expect, it } from '@jest/globals';
import {
  describeDuplicate,
  describeOverlap,
  findDuplicateCodes,
  findWindowOverlaps,
  planCodedListChange,
  visitWindow,
  type ScheduledVisit,
} from './schedule-rules.js';

/** A visit on `day` with a window of `before` / `after` days; the name is the code. */
function visit(code: string, day: number, before: number, after = before): ScheduledVisit {
  return { code, name: code, dayOffset: day, windowBeforeDays: before, windowAfterDays: after };
}

describe('visitWindow', () => {
  it.each([
    ['SCR on day -14, 7 days either side', visit('SCR', -14, 7), -21, -7],
    ['V2 on day 1, no window', visit('V2', 1, 0), 1, 1],
    ['V3 on day 29, 3 days before and 5 after', visit('V3', 29, 3, 5), 26, 34],
  ])('%s spans days %i to %i', (_label, input, fromDay, toDay) => {
    expect(visitWindow(input)).toEqual({ fromDay, toDay });
  });
});

describe('findWindowOverlaps', () => {
  // Each row: visits, then the expected overlaps as [first, second, fromDay, toDay]. Common practice:
  // a day inside two windows leaves a session's visit ambiguous.
  it.each<[string, ScheduledVisit[], [string, string, number, number][]]>([
    ['the demo schedule (separate windows)', [visit('SCR', -14, 7), visit('V2', 1, 0), visit('V3', 29, 3), visit('V4', 85, 5)], []],
    ['an empty schedule', [], []],
    ['one visit', [visit('V1', 1, 10)], []],
    ['windows one day apart', [visit('V1', 1, 0, 2), visit('V2', 5, 1)], []],
    ['windows that touch on one day', [visit('V1', 1, 0, 3), visit('V2', 6, 2)], [['V1', 'V2', 4, 4]]],
    ['windows sharing three days', [visit('V3', 29, 3), visit('V4', 33, 3)], [['V3', 'V4', 30, 32]]],
    ['two visits on the same day without windows', [visit('A', 10, 0), visit('B', 10, 0)], [['A', 'B', 10, 10]]],
    ['one window inside another', [visit('LONG', 50, 30), visit('SHORT', 40, 1)], [['SHORT', 'LONG', 39, 41]]],
    [
      'a wide window over two later visits, listed out of order',
      [visit('C', 60, 1), visit('A', 30, 0, 40), visit('B', 45, 1)],
      [
        ['A', 'B', 44, 46],
        ['A', 'C', 59, 61],
      ],
    ],
    ['negative days before randomisation', [visit('SCR', -14, 7), visit('RUN-IN', -7, 2)], [['SCR', 'RUN-IN', -9, -7]]],
    ['a wide later window reaching back over an earlier visit', [visit('D1', 1, 0), visit('W4', 5, 7, 3)], [['D1', 'W4', 1, 1]]],
    [
      'three visits on one day, in the order listed',
      [visit('X', 8, 0), visit('Y', 8, 0), visit('Z', 8, 0)],
      [
        ['X', 'Y', 8, 8],
        ['X', 'Z', 8, 8],
        ['Y', 'Z', 8, 8],
      ],
    ],
  ])('%s', (_label, visits, expected) => {
    const found = findWindowOverlaps(visits).map((o) => [o.first.code, o.second.code, o.fromDay, o.toDay]);
    expect(found).toEqual(expected);
  });

  it('names both visits, their windows and the shared days', () => {
    const [overlap] = findWindowOverlaps([
      { code: 'V3', name: 'Week 4', dayOffset: 29, windowBeforeDays: 3, windowAfterDays: 3 },
      { code: 'V4', name: 'Week 5', dayOffset: 33, windowBeforeDays: 3, windowAfterDays: 3 },
    ]);
    expect(describeOverlap(overlap)).toBe('Visits V3 (Week 4, days 26 to 32) and V4 (Week 5, days 30 to 36) overlap on days 30 to 32');
  });

  it('says "day" for a single shared day', () => {
    const [overlap] = findWindowOverlaps([visit('A', 10, 0), visit('B', 10, 0)]);
    expect(describeOverlap(overlap)).toBe('Visits A (A, day 10) and B (B, day 10) overlap on day 10');
  });
});

describe('findDuplicateCodes', () => {
  it.each<[string[], { code: string; rows: number[] }[]]>([
    [['SCR', 'V2', 'V3'], []],
    [[], []],
    [['V1', 'V2', 'V1'], [{ code: 'V1', rows: [1, 3] }]],
    [['pre', 'PRE', 'post', 'Post', 'x'], [{ code: 'pre', rows: [1, 2] }, { code: 'post', rows: [3, 4] }]],
  ])('%j', (codes, expected) => {
    expect(findDuplicateCodes(codes)).toEqual(expected);
  });

  it('names the code and its rows', () => {
    expect(describeDuplicate('timepoint', { code: 'PRE', rows: [1, 3] })).toBe('The timepoint code PRE is used in rows 1 and 3');
  });
});

describe('planCodedListChange', () => {
  const stored = [
    { id: 'v-scr', code: 'SCR' },
    { id: 'v-2', code: 'V2' },
    { id: 'v-3', code: 'V3' },
  ];

  it.each<[string, { code: string }[], string[], [string, number][], string[]]>([
    ['nothing changed', [{ code: 'SCR' }, { code: 'V2' }, { code: 'V3' }], ['v-scr', 'v-2', 'v-3'], [], []],
    ['one added at the end', [{ code: 'SCR' }, { code: 'V2' }, { code: 'V3' }, { code: 'V4' }], ['v-scr', 'v-2', 'v-3'], [['V4', 3]], []],
    ['one removed', [{ code: 'SCR' }, { code: 'V3' }], ['v-scr', 'v-3'], [], ['v-2']],
    ['reordered keeps ids', [{ code: 'V3' }, { code: 'SCR' }], ['v-3', 'v-scr'], [], ['v-2']],
    ['a changed code is a removal and an addition', [{ code: 'SCR' }, { code: 'V2' }, { code: 'v3' }], ['v-scr', 'v-2'], [['v3', 2]], ['v-3']],
  ])('%s', (_label, proposed, keptIds, added, removedIds) => {
    const plan = planCodedListChange(stored, proposed);
    expect(plan.kept.map((k) => k.stored.id)).toEqual(keptIds);
    expect(plan.added.map((a) => [a.proposed.code, a.ordinal])).toEqual(added);
    expect(plan.removed.map((r) => r.id)).toEqual(removedIds);
  });

  it('gives kept items their new position', () => {
    const plan = planCodedListChange(stored, [{ code: 'V3' }, { code: 'NEW' }, { code: 'SCR' }]);
    expect(plan.kept.map((k) => [k.stored.code, k.ordinal])).toEqual([
      ['V3', 0],
      ['SCR', 2],
    ]);
  });
});
