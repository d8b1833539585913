import fs from 'node:fs';
import path from 'node:path';
import { beforeAll, expect, it } from '@jest/globals';
import type { ReferenceParameter } from '../../shared/spirometry/model.js';
import { createGliGlobal2022Equations } from '../../shared/spirometry/reference/gli-global-2022.js';
import type { GliLookupSet } from '../../shared/spirometry/reference/gli-tables.js';
import type { ReferenceEquations } from '../../shared/spirometry/reference/reference-equations.js';
import { parseGliGlobalWorkbook } from '../../server/reference-sets/gli-global-workbook.js';
import { loadReferenceEquations } from '../../server/reference-sets/reference-loader.js';
import { REFERENCE_DIR, describeWithReference, readReferenceCsv } from './reference-folder.js';

const maybe = describeWithReference([
  'gli-global-2022/lookup-tables.xlsx',
  'gli-global-2022/cross-check-values.csv',
  'gli-global-2022/coefficients.csv',
  'gli-global-2022/splines-fev1-male.csv',
]);

const PARAMETERS: readonly [ReferenceParameter, string][] = [
  ['fev1', 'fev1'],
  ['fvc', 'fvc'],
  ['fev1Fvc', 'fev1fvc'],
];

maybe('GLI Global 2022 from the publisher workbook', () => {
  let lookup: GliLookupSet;
  let equations: ReferenceEquations;

  beforeAll(async () => {
    lookup = await parseGliGlobalWorkbook(fs.readFileSync(path.join(REFERENCE_DIR, 'gli-global-2022/lookup-tables.xlsx')));
    equations = createGliGlobal2022Equations(lookup);
  });

  it('matches all 30 cross-check rows: predicted, LLN, z-score and percent predicted', () => {
    // Source: cross-check-values.csv, Bowerman 2023 equations computed by an independent
    // open-source implementation (predicted, LLN, and z / %pred of a value at 85 % of predicted).
    const rows = readReferenceCsv('gli-global-2022/cross-check-values.csv');
    expect(rows).toHaveLength(30);
    for (const row of rows) {
      const demographics = { sex: row['sex'] === 'M' ? 'male' : 'female', ageYears: Number(row['age']), heightCm: Number(row['height']) } as const;
      for (const [parameter, column] of PARAMETERS) {
        const value = equations.predict(demographics, parameter, Number(row[`${column}_measured`]));
        const where = `${row['sex']} ${row['age']} y ${row['height']} cm ${column}`;
        expect({ where, predicted: value.predicted }).toEqual({ where, predicted: expect.closeTo(Number(row[`${column}_pred_2022`]), 10) });
        expect({ where, lln: value.lln }).toEqual({ where, lln: expect.closeTo(Number(row[`${column}_lln_2022`]), 10) });
        expect({ where, z: value.z }).toEqual({ where, z: expect.closeTo(Number(row[`${column}_zscore_2022`]), 10) });
        expect({ where, pp: value.percentPredicted }).toEqual({ where, pp: expect.closeTo(Number(row[`${column}_pctpred_2022`]), 8) });
      }
    }
  });

  it('reads the same spline values as the published CSV splines, row by row', () => {
    // Source: splines-<parameter>-<sex>.csv, the same Bowerman 2023 splines as CSV.
    for (const sex of ['male', 'female'] as const) {
      for (const [parameter, file] of PARAMETERS) {
        const csv = readReferenceCsv(`gli-global-2022/splines-${file}-${sex}.csv`);
        const splines = lookup[sex][parameter]?.splines ?? [];
        expect(splines).toHaveLength(csv.length);
        csv.forEach((row, index) => {
          expect(splines[index].ageYears).toBe(Number(row['age']));
          expect(splines[index].mSpline).toBeCloseTo(Number(row['Mspline']), 12);
          expect(splines[index].sSpline).toBeCloseTo(Number(row['Sspline']), 12);
          expect(splines[index].lSpline).toBeCloseTo(Number(row['Lspline']), 12);
        });
      }
    }
  });

  it('reads the same coefficients from the equation text as the published coefficients table', () => {
    // Source: gli-global-2022/coefficients.csv (Bowerman 2023 supplement): a0-a2, p0-p1, q0-q1.
    const table = readReferenceCsv('gli-global-2022/coefficients.csv', ';');
    const coefficient = (name: string, column: string) => {
      const cell = table.find((row) => row['var'] === name)?.[column] ?? '';
      return cell === '' ? 0 : Number(cell);
    };
    for (const sex of ['male', 'female'] as const) {
      for (const [parameter, file] of PARAMETERS) {
        const column = `${file.toUpperCase()}_${sex}s`;
        const c = lookup[sex][parameter]?.coefficients;
        expect(c).toMatchObject({
          mIntercept: coefficient('a0', column),
          mLnHeight: coefficient('a1', column),
          mLnAge: coefficient('a2', column),
          sIntercept: coefficient('p0', column),
          sLnAge: coefficient('p1', column),
          lIntercept: coefficient('q0', column),
          lLnAge: coefficient('q1', column),
        });
      }
    }
  });

  it('loads through the reference folder, ignores ethnicity and has no FEF equations', async () => {
    // Bowerman 2023: race-neutral, FEV1, FVC and FEV1/FVC only.
    const loaded = await loadReferenceEquations('gli-global-2022', REFERENCE_DIR);
    const demographics = { sex: 'male', ageYears: 25, heightCm: 155 } as const;
    const withGroup = loaded.predict({ ...demographics, ethnicity: 'african-american' }, 'fev1');
    // cross-check-values.csv, row M 25 y 155 cm.
    expect(withGroup.predicted).toBeCloseTo(3.10099174918164, 10);
    expect(loaded.predict(demographics, 'fev1').predicted).toBe(withGroup.predicted);
    expect(loaded.predict(demographics, 'fef2575').reason).toMatch(/no equation for FEF25-75/);
  });
});
