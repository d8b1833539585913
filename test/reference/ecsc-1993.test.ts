import { expect, it } from '@jest/globals';
import type { ReferenceParameter } from '../../shared/spirometry/model.js';
import { ECSC_1993_EQUATIONS } from '../../shared/spirometry/reference/ecsc-1993.js';
import { describeWithReference, readReferenceCsv } from './reference-folder.js';

const maybe = describeWithReference(['ecsc1993/coefficients.csv']);

/** Names used in the independent transcription for the parameters Tidemark builds in. */
const PUBLISHED: Readonly<Partial<Record<ReferenceParameter, string>>> = {
  fvc: 'FVC',
  fev1: 'FEV1',
  fev1Fvc: 'FEV1FVC',
  fef2575: 'FEF25_75',
  fef75: 'FEF75',
  pef: 'PEFR',
};

maybe('ECSC/ERS 1993 built-in coefficients against an independent transcription', () => {
  it('has the same intercept, height and age coefficients for every built-in equation', () => {
    // Quanjer 1993 (Eur Respir J 1993;6 Suppl 16:5-40), transcribed in ecsc1993/coefficients.csv
    // with height in cm; the built-in equations use metres, hence the factor 100.
    const rows = readReferenceCsv('ecsc1993/coefficients.csv', ';');
    let checked = 0;
    for (const sex of ['male', 'female'] as const) {
      for (const [parameter, published] of Object.entries(PUBLISHED) as [ReferenceParameter, string][]) {
        const row = rows.find((r) => r['parameter'] === published && r['sex'] === sex);
        const equation = ECSC_1993_EQUATIONS[sex][parameter];
        expect({ sex, parameter, found: row !== undefined && equation !== undefined }).toEqual({ sex, parameter, found: true });
        expect(equation?.intercept).toBeCloseTo(Number(row?.['a0']), 10);
        expect(equation?.perHeightM).toBeCloseTo(Number(row?.['a_ht']) * 100, 10);
        expect(equation?.perAgeYears).toBeCloseTo(Number(row?.['a_age']), 10);
        checked++;
      }
    }
    expect(checked).toBe(12);
  });
});
