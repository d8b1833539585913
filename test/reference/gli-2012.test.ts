import { beforeAll, expect, it } from '@jest/globals';
import type { Demographics, ReferenceParameter } from '../../shared/spirometry/model.js';
import type { ReferenceEquations } from '../../shared/spirometry/reference/reference-equations.js';
import { loadReferenceEquations } from '../../server/reference-sets/reference-loader.js';
import { GLI_CALCULATOR_ETHNIC_CODES, REFERENCE_DIR, describeWithReference, readReferenceCsv } from './reference-folder.js';

const maybe = describeWithReference([
  'gli2012/coefficients.csv',
  'gli2012/splines.csv',
  'gli2012/calculator-inputs-sample.csv',
  'gli2012/calculator-output-sample.csv',
]);

/** Calculator column prefix for each parameter. */
const COLUMNS: readonly [ReferenceParameter, string][] = [
  ['fev1', 'fev1'],
  ['fvc', 'fvc'],
  ['fev1Fvc', 'fev1fvc'],
  ['fef2575', 'fef2575'],
  ['fef75', 'fef75'],
];

/** Agreement to 3 decimals: within half a unit of the calculator's rounded figure. */
const HALF_UNIT = 0.0005 + 1e-9;

maybe('GLI-2012 equations against the GLI calculator', () => {
  let equations: ReferenceEquations;
  let cases: { demographics: Demographics; expected: Record<string, string> }[];

  beforeAll(async () => {
    equations = await loadReferenceEquations('gli-2012', REFERENCE_DIR);
    const inputs = readReferenceCsv('gli2012/calculator-inputs-sample.csv');
    const outputs = readReferenceCsv('gli2012/calculator-output-sample.csv');
    cases = inputs.map((input, index) => ({
      demographics: {
        sex: input['sex'] === 'M' ? 'male' : 'female',
        ageYears: Number(input['age']),
        heightCm: Number(input['height']),
        ethnicity: GLI_CALCULATOR_ETHNIC_CODES[input['ethnic'] as keyof typeof GLI_CALCULATOR_ETHNIC_CODES],
      },
      expected: outputs[index],
    }));
  });

  function mismatches(ageOf: (ageYears: number) => number): { count: number; worst: number; examples: string[] } {
    let count = 0;
    let worst = 0;
    const examples: string[] = [];
    cases.forEach(({ demographics, expected }, index) => {
      for (const [parameter, column] of COLUMNS) {
        const value = equations.predict({ ...demographics, ageYears: ageOf(demographics.ageYears) }, parameter);
        for (const [field, actual] of [
          ['predicted', value.predicted],
          ['lln', value.lln],
          ['uln', value.uln],
        ] as const) {
          const difference = Math.abs((actual ?? Number.NaN) - Number(expected[`${column}_${field}`]));
          worst = Math.max(worst, Number.isNaN(difference) ? Infinity : difference);
          if (!(difference <= HALF_UNIT)) {
            count++;
            if (examples.length < 5) examples.push(`row ${index + 2} ${column}_${field}: ${actual} vs ${expected[`${column}_${field}`]}`);
          }
        }
      }
    });
    return { count, worst, examples };
  }

  it('reads all 300 calculator rows', () => {
    // GLI-2012 web calculator output sample (Global Lung Function Initiative), 300 rows.
    expect(cases).toHaveLength(300);
  });

  it('matches predicted, LLN and ULN of FEV1, FVC, FEV1/FVC, FEF25-75 and FEF75 to 3 decimals in every row', () => {
    // Source: GLI-2012 web calculator output (Quanjer 2012 equations, calculator-output-sample.csv),
    // including its deliberately implausible heights.
    const result = mismatches((age) => age);
    expect(result.examples).toEqual([]);
    expect(result.count).toBe(0);
  });

  it('would miss the calculator if ages were rounded to the nearest quarter year instead of interpolated', () => {
    // Reference data notes: rounding to the knot misses the calculator by up to 0.044 L.
    // This proves the check above is sensitive to the interpolation.
    const result = mismatches((age) => Math.round(age * 4) / 4);
    expect(result.count).toBeGreaterThan(0);
    expect(result.worst).toBeGreaterThan(0.01);
  });

  it('gives z = 0 and 100 % predicted at the predicted value and z = -1.645 at the LLN', () => {
    // LMS definitions (Quanjer 2012): LLN is the value at z = -1.645.
    const demographics: Demographics = { sex: 'female', ageYears: 42.3, heightCm: 163, ethnicity: 'north-east-asian' };
    const base = equations.predict(demographics, 'fev1');
    const atPredicted = equations.predict(demographics, 'fev1', base.predicted ?? Number.NaN);
    const atLln = equations.predict(demographics, 'fev1', base.lln ?? Number.NaN);
    expect(atPredicted.z).toBeCloseTo(0, 12);
    expect(atPredicted.percentPredicted).toBeCloseTo(100, 12);
    expect(atLln.z).toBeCloseTo(-1.645, 12);
  });

  it('refuses ages outside 3-95 y (FEF25-75 and FEF75: 3-90 y), unknown groups and a missing group, with reasons', () => {
    // Age ranges: Quanjer 2012 (3-95 y; mid-expiratory flows to 90 y).
    const adult: Demographics = { sex: 'male', ageYears: 92, heightCm: 170, ethnicity: 'caucasian' };
    expect(equations.predict(adult, 'fev1').predicted).not.toBeNull();
    expect(equations.predict(adult, 'fef2575')).toMatchObject({ predicted: null, lln: null, uln: null });
    expect(equations.predict(adult, 'fef2575').reason).toMatch(/3-90 y/);
    expect(equations.predict({ ...adult, ageYears: 2.9 }, 'fev1').reason).toMatch(/outside the 3-95 y range/);
    expect(equations.predict({ ...adult, ageYears: 95.1 }, 'fvc').predicted).toBeNull();
    expect(equations.predict({ ...adult, ethnicity: 'mexican-american' }, 'fev1').reason).toMatch(/no equations for the ethnic group/);
    expect(equations.predict({ ...adult, ethnicity: undefined }, 'fev1').reason).toMatch(/needs the ethnic group/);
    expect(equations.predict(adult, 'pef').reason).toMatch(/no equation for PEF/);
    expect(equations.predict({ ...adult, heightCm: 0 }, 'fev1').reason).toMatch(/Height/);
  });
});
