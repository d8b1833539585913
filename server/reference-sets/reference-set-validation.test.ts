import fs from 'node:fs';
import path from 'node:path';
import { describe, expect, it } from '@jest/globals';
import { strToU8, zipSync } from 'fflate';
import type { PredictedValue } from '../../shared/spirometry/model.js';
import type { ReferenceEquations } from '../../shared/spirometry/reference/reference-equations.js';
import { REFERENCE_DIR, describeWithReference } from '../../test/reference/reference-folder.js';
import { Findings, checkAges } from './reference-set-layout-checks.js';
import { runSpotChecks, spotCheckProblem } from './reference-set-spot-checks.js';
import { equationsFromReferenceFile, validateReferenceFile } from './reference-set-validation.js';

const quarterAges = (from: number, to: number, skip: readonly number[] = []) => {
  const ages: { ageYears: number; row: number }[] = [];
  for (let age = from; age <= to + 1e-9; age += 0.25) if (!skip.includes(age)) ages.push({ ageYears: age, row: ages.length + 2 });
  return ages;
};

describe('checkAges', () => {
  // GLI lookup tables run from 3 y in quarter years (Quanjer 2012; Bowerman 2023).
  it.each([
    { name: 'a complete 3-95 y table', ages: quarterAges(3, 95), last: 95, problems: [] as RegExp[] },
    { name: 'a FEF table ending at 90 y', ages: quarterAges(3, 90), last: 90, problems: [] },
    { name: 'a gap of one year', ages: quarterAges(3, 95, [15, 15.25, 15.5, 15.75]), last: 95, problems: [/ages 15-15\.75 y are missing/] },
    { name: 'two separate gaps', ages: quarterAges(3, 95, [4, 60.5]), last: 95, problems: [/ages 4 y, 60\.5 y are missing/] },
    { name: 'a table stopping at 80 y', ages: quarterAges(3, 80), last: 95, problems: [/ages 80\.25-95 y are missing/] },
    { name: 'an age off the quarter-year grid', ages: [...quarterAges(3, 95), { ageYears: 50.1, row: 400 }], last: 95, problems: [/row 400: age 50\.1 y is not one of the table's ages/] },
    { name: 'an age twice', ages: [...quarterAges(3, 95), { ageYears: 20, row: 400 }], last: 95, problems: [/row 400: age 20 y appears a second time \(first in row 70\)/] },
    { name: 'no rows', ages: [], last: 95, problems: [/no age rows were found/] },
  ])('$name', ({ ages, last, problems }) => {
    const findings = new Findings();
    checkAges(findings, 'ages', 'table.csv', ages, last);
    expect(findings.problems).toHaveLength(problems.length);
    problems.forEach((pattern, index) => expect(findings.problems[index]).toMatch(pattern));
    expect(findings.checks[0].passed).toBe(problems.length === 0);
  });

  it('says when ages go backwards', () => {
    const ages = quarterAges(3, 95);
    [ages[10], ages[11]] = [ages[11], ages[10]];
    const findings = new Findings();
    checkAges(findings, 'ages', 'table.csv', ages, 95);
    expect(findings.problems).toEqual([expect.stringMatching(/row 12: age 5\.5 y comes after age 5\.75 y; ages must increase/)]);
  });
});

describe('runSpotChecks', () => {
  /** Equations that give the same value for everything. */
  const constant = (value: number | null): ReferenceEquations => ({
    id: 'nhanes3',
    label: 'NHANES III',
    source: 'test double',
    parameters: ['fev1', 'fvc', 'fev1Fvc'],
    ethnicities: null,
    predict: (): PredictedValue => ({ predicted: value, lln: value, uln: value, z: null, percentPredicted: null }),
  });

  it('fails every check against wrong numbers and names the expected value and its source', () => {
    const checks = runSpotChecks('nhanes3', constant(1));
    expect(checks.length).toBeGreaterThanOrEqual(5);
    expect(checks.every((check) => !check.passed)).toBe(true);
    // Hankinson 1999 Table 4: FEV1, male Caucasian 40 y 175 cm, predicted 4.0747125 L.
    expect(spotCheckProblem(checks[0])).toMatch(/Male, Caucasian, 40 y, 175 cm: FEV1 predicted should be 4\.0747125 .*the file gives 1\. .*Hankinson 1999/);
  });

  it('fails a check for which the tables give no value', () => {
    expect(runSpotChecks('gli-global-2022', constant(null)).every((check) => !check.passed && check.found === null)).toBe(true);
  });
});

describe('validateReferenceFile: the kind of file', () => {
  const zipOf = (files: Record<string, string>) => Buffer.from(zipSync(Object.fromEntries(Object.entries(files).map(([name, text]) => [name, strToU8(text)]))));
  it.each([
    { name: 'an empty file as GLI Global', id: 'gli-global-2022', bytes: Buffer.alloc(0), problem: /x is not an Excel workbook \(\.xlsx\): it is empty/ },
    {
      name: 'an Excel 97-2003 file as GLI Global',
      id: 'gli-global-2022',
      bytes: Buffer.from([0xd0, 0xcf, 0x11, 0xe0, 0xa1, 0xb1, 0x1a, 0xe1]),
      problem: /Excel 97-2003 workbook \(\.xls\).*save it as \.xlsx/,
    },
    { name: 'a PDF as GLI-2012', id: 'gli-2012', bytes: Buffer.from('%PDF-1.7\n'), problem: /x is a PDF document, not a \.zip archive/ },
    { name: 'a zip without Table 6 as NHANES III', id: 'nhanes3', bytes: zipOf({ 'coefficients-tables-4-5.csv': 'a' }), problem: /x holds no coefficients-table-6\.csv/ },
    {
      name: 'a zip with two splines.csv as GLI-2012',
      id: 'gli-2012',
      bytes: zipOf({ 'a/splines.csv': 'x', 'b/splines.csv': 'y', 'coefficients.csv': 'z' }),
      problem: /x holds 2 files named splines\.csv \(a\/splines\.csv, b\/splines\.csv\); keep one/,
    },
    { name: 'a truncated zip as NHANES III', id: 'nhanes3', bytes: zipOf({ 'coefficients-tables-4-5.csv': 'a'.repeat(5000) }).subarray(0, 60), problem: /not a readable zip archive/ },
  ] as const)('refuses $name', async ({ id, bytes, problem }) => {
    const { validation, equations } = await validateReferenceFile(id, 'x', bytes);
    expect(equations).toBeNull();
    expect(validation.problems.join('\n')).toMatch(problem);
    expect(validation.summary).toMatch(/^Refused: \d+ problems?$/);
  });
});

const read = (relative: string) => fs.readFileSync(path.join(REFERENCE_DIR, relative), 'utf8');

describeWithReference(['gli2012/coefficients.csv', 'gli2012/splines.csv'])('validateReferenceFile: GLI-2012 tables (Quanjer 2012 supplement)', () => {
  const archive = (coefficients: string, splines: string) => Buffer.from(zipSync({ 'gli2012/coefficients.csv': strToU8(coefficients), 'gli2012/splines.csv': strToU8(splines) }));

  it('accepts the published tables and agrees with every calculator spot check', async () => {
    const bytes = archive(read('gli2012/coefficients.csv'), read('gli2012/splines.csv'));
    const { validation, equations } = await validateReferenceFile('gli-2012', 'gli2012.zip', bytes);
    expect(validation.problems).toEqual([]);
    expect(validation.spotChecks.every((check) => check.passed)).toBe(true);
    // FEF tables end at 90 y (Quanjer 2012).
    expect(validation.checks.find((check) => check.subject.endsWith('FEF75 females ages'))?.found).toBe('3-90 y, 349 rows');
    expect(equations?.label).toBe('GLI-2012');
    expect((await equationsFromReferenceFile('gli-2012', 'gli2012.zip', bytes)).label).toBe('GLI-2012');
  });

  it('lists a missing column, a missing row and a non-numeric cell together', async () => {
    const coefficients = read('gli2012/coefficients.csv')
      .replace('FEV1_females;', 'FEV1_f;')
      .split('\n')
      .filter((line) => !line.startsWith('p5;'))
      .join('\n');
    const splines = read('gli2012/splines.csv').split('\n');
    splines[5] = splines[5].replace(/;-?[\d.]+;/, ';n/a;');
    const { validation } = await validateReferenceFile('gli-2012', 'gli2012.zip', archive(coefficients, splines.join('\n')));
    const text = validation.problems.join('\n');
    expect(text).toMatch(/gli2012\.zip\/gli2012\/coefficients\.csv lacks the column\(s\) FEV1_females/);
    expect(text).toMatch(/coefficients\.csv has no row\(s\) p5/);
    expect(text).toMatch(/gli2012\.zip\/gli2012\/splines\.csv, row 6, column FEV1_males_Lspline holds "n\/a"; a number is expected/);
  });
});

describeWithReference(['nhanes3/coefficients-tables-4-5.csv', 'nhanes3/coefficients-table-6.csv'])('validateReferenceFile: NHANES III (Hankinson 1999)', () => {
  const archive = (quadratic: string, ratio: string) =>
    Buffer.from(zipSync({ 'coefficients-tables-4-5.csv': strToU8(quadratic), 'coefficients-table-6.csv': strToU8(ratio) }));

  it('accepts Tables 4-6 as published', async () => {
    const { validation } = await validateReferenceFile('nhanes3', 'nhanes3.zip', archive(read('nhanes3/coefficients-tables-4-5.csv'), read('nhanes3/coefficients-table-6.csv')));
    expect(validation.problems).toEqual([]);
    expect(validation.spotChecks.every((check) => check.passed)).toBe(true);
  });

  it('catches a coefficient typed wrong through the spot checks', async () => {
    // Table 4, FEV1 male Caucasian adult: a3 (height²) 0.00014098 typed as 0.00014089.
    const quadratic = read('nhanes3/coefficients-tables-4-5.csv').replace('FEV1;male;caucasian;adult;0.5536;-0.01303;-0.000172;0.00014098', 'FEV1;male;caucasian;adult;0.5536;-0.01303;-0.000172;0.00014089');
    expect(quadratic).toContain('0.00014089');
    const { validation, equations } = await validateReferenceFile('nhanes3', 'nhanes3.zip', archive(quadratic, read('nhanes3/coefficients-table-6.csv')));
    expect(equations).toBeNull();
    expect(validation.problems).toEqual([expect.stringMatching(/Spot check failed: Male, Caucasian, 40 y, 175 cm: FEV1 predicted should be 4\.0747125/)]);
  });
});
