import { describe, expect, it } from '@jest/globals';
import { FINDING_CATALOGUE } from './finding-codes.js';
import type { FindingCode } from './model.js';

/** Which verdicts a finding costs: [acceptable FEV1, acceptable FVC, usable FEV1, usable FVC]. */
function verdictsCost(code: FindingCode): [boolean, boolean, boolean, boolean] {
  const d = FINDING_CATALOGUE[code];
  const fev1 = d.affects.includes('fev1');
  const fvc = d.affects.includes('fvc');
  const usable = d.costs === 'acceptable-and-usable';
  return [fev1, fvc, fev1 && usable, fvc && usable];
}

describe('FINDING_CATALOGUE', () => {
  // ATS/ERS 2019 (Graham 2019) Table 7, reconstructed from memory: each row lists whether the
  // criterion is required for acceptable FEV1, acceptable FVC, usable FEV1, usable FVC.
  const TABLE_7: [FindingCode, string, [boolean, boolean, boolean, boolean]][] = [
    ['bev-excessive', 'BEV <= 5 % of FVC or 0.100 L', [true, true, true, true]],
    ['zero-drift', 'no faulty zero-flow setting', [true, true, true, true]],
    ['cough-first-second', 'no cough in the first second', [true, false, true, false]],
    ['glottic-stop-first-second', 'no glottic closure in the first second', [true, true, true, true]],
    ['glottic-stop-late', 'no glottic closure after the first second', [false, true, false, false]],
    ['end-early', 'EOFE met', [false, true, false, false]],
    ['fivc-exceeds-fvc', 'FIVC check', [true, true, false, false]],
  ];

  it.each(TABLE_7)('%s follows the Table 7 row "%s"', (code, _row, expected) => {
    expect(verdictsCost(code)).toEqual(expected);
    expect(FINDING_CATALOGUE[code].status).toBe('memory');
  });

  it('marks the findings outside Table 7 as the reader\'s judgement, costing no verdict by themselves', () => {
    const inTable = new Set(TABLE_7.map(([code]) => code));
    for (const d of Object.values(FINDING_CATALOGUE)) {
      if (inTable.has(d.code)) continue;
      expect([d.code, d.costs, d.affects]).toEqual([d.code, 'none', []]);
    }
  });

  it('describes every code under its own key, in plain words', () => {
    for (const [code, d] of Object.entries(FINDING_CATALOGUE)) {
      expect(d.code).toBe(code);
      expect(d.title.length).toBeGreaterThan(5);
      expect(d.explanation.length).toBeGreaterThan(40);
      expect(d.source.length).toBeGreaterThan(5);
    }
    // Only the submaximal blow compares efforts (common practice: PEF well below the session's best).
    expect(Object.values(FINDING_CATALOGUE).filter((d) => d.sessionLevel).map((d) => d.code)).toEqual(['blow-submaximal']);
  });
});
