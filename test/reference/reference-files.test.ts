import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { beforeAll, describe, expect, it } from '@jest/globals';
import ExcelJS from 'exceljs';
import { SpirometryInputError } from '../../shared/spirometry/model.js';
import { parseGli2012Csv } from '../../server/reference-sets/gli-2012-csv.js';
import { parseGliGlobalWorkbook } from '../../server/reference-sets/gli-global-workbook.js';
import { parseNhanes3Csv } from '../../server/reference-sets/nhanes3-csv.js';
import { loadReferenceEquations } from '../../server/reference-sets/reference-loader.js';
import { REFERENCE_DIR, describeWithReference } from './reference-folder.js';

// Damaged copies of the published files (GLI-2012 and GLI Global supplements, Hankinson 1999
// tables): each must be refused with a message that names where the problem is.

const read = (relative: string) => fs.readFileSync(path.join(REFERENCE_DIR, relative));

async function rejection(promise: Promise<unknown>): Promise<SpirometryInputError> {
  try {
    await promise;
  } catch (error) {
    expect(error).toBeInstanceOf(SpirometryInputError);
    return error as SpirometryInputError;
  }
  throw new Error('expected the file to be refused');
}

function thrown(action: () => unknown): SpirometryInputError {
  try {
    action();
  } catch (error) {
    expect(error).toBeInstanceOf(SpirometryInputError);
    return error as SpirometryInputError;
  }
  throw new Error('expected the file to be refused');
}

describeWithReference(['gli-global-2022/lookup-tables.xlsx'])('GLI Global workbook checks', () => {
  let original: Buffer;
  beforeAll(() => {
    original = read('gli-global-2022/lookup-tables.xlsx');
  });

  async function damaged(change: (workbook: ExcelJS.Workbook) => void): Promise<Buffer> {
    const workbook = new ExcelJS.Workbook();
    await workbook.xlsx.load(original as unknown as ExcelJS.Buffer);
    change(workbook);
    return Buffer.from(await workbook.xlsx.writeBuffer());
  }

  it('accepts the publisher workbook unchanged', async () => {
    const lookup = await parseGliGlobalWorkbook(original);
    // Bowerman 2023 tables: 3-95 y in quarter years = 369 rows.
    expect(lookup.male.fev1?.splines).toHaveLength(369);
  });

  it('names the missing table when a sheet is renamed', async () => {
    const buffer = await damaged((workbook) => {
      (workbook.getWorksheet('Female FVC') as ExcelJS.Worksheet).name = 'Sheet5';
    });
    const error = await rejection(parseGliGlobalWorkbook(buffer));
    expect(error.message).toMatch(/no sheet for female FVC/);
    expect(error.message).toMatch(/"Sheet5"/);
  });

  it('names sheet and row when an age row is missing', async () => {
    const buffer = await damaged((workbook) => (workbook.getWorksheet('Male FEV1') as ExcelJS.Worksheet).spliceRows(50, 1));
    const error = await rejection(parseGliGlobalWorkbook(buffer));
    // Row 50 held 15 y; after removal it holds 15.25 y.
    expect(error.message).toMatch(/sheet "Male FEV1", row 50: age 15.25 where 15 was expected/);
  });

  it('names sheet, row and column of a non-numeric cell', async () => {
    const buffer = await damaged((workbook) => {
      (workbook.getWorksheet('Male FVC') as ExcelJS.Worksheet).getCell('C10').value = 'n/a';
    });
    const error = await rejection(parseGliGlobalWorkbook(buffer));
    expect(error.message).toMatch(/sheet "Male FVC", row 10, column S Spline holds "n\/a"; a number is expected/);
  });

  it('refuses a sheet whose header lacks a spline column', async () => {
    const buffer = await damaged((workbook) => {
      (workbook.getWorksheet('Female FEV1') as ExcelJS.Worksheet).getCell('D1').value = 'Notes';
    });
    const error = await rejection(parseGliGlobalWorkbook(buffer));
    expect(error.message).toMatch(/sheet "Female FEV1", row 1: the header lacks lspline/);
  });

  it('refuses an equation it cannot read', async () => {
    const buffer = await damaged((workbook) => {
      (workbook.getWorksheet('Male FEV1') as ExcelJS.Worksheet).getCell('G4').value = 'exp(-11.399108 + 2.462664*ln(weight) + M Spline)';
    });
    const error = await rejection(parseGliGlobalWorkbook(buffer));
    expect(error.message).toMatch(/sheet "Male FEV1", row 4: the M equation .* cannot be read from "ln\(weight\)/);
  });

  it('refuses a file that is not a workbook', async () => {
    const error = await rejection(parseGliGlobalWorkbook(Buffer.from('age,Mspline\n3,0.1\n')));
    expect(error.message).toMatch(/cannot be read as an Excel workbook/);
  });
});

describeWithReference(['gli2012/coefficients.csv', 'gli2012/splines.csv'])('GLI-2012 CSV checks', () => {
  let coefficients: string;
  let splines: string;
  beforeAll(() => {
    coefficients = read('gli2012/coefficients.csv').toString('utf8');
    splines = read('gli2012/splines.csv').toString('utf8');
  });
  const lines = (text: string) => text.split(/\r?\n/);

  it('names row and column of a non-numeric spline cell', () => {
    const rows = lines(splines);
    const cells = rows[9].split(';');
    cells[2] = 'abc';
    rows[9] = cells.join(';');
    const error = thrown(() => parseGli2012Csv(coefficients, rows.join('\n')));
    expect(error.message).toMatch(/row 10, column FEV1_males_Mspline holds "abc"/);
  });

  it('names the row where an age is missing', () => {
    const rows = lines(splines);
    rows.splice(20, 1);
    const error = thrown(() => parseGli2012Csv(coefficients, rows.join('\n')));
    // Line 21 held 7.75 y; without it the file jumps from 7.5 y to 8 y.
    expect(error.message).toMatch(/row 21: age 8 where 7.75 was expected/);
  });

  it('refuses a coefficients file without the q1 row', () => {
    const rows = lines(coefficients).filter((row) => !row.startsWith('q1;'));
    expect(thrown(() => parseGli2012Csv(rows.join('\n'), splines)).message).toMatch(/has no row "q1"/);
  });

  it('refuses a splines file without a needed column', () => {
    const renamed = splines.replace('FEF75_females_Sspline', 'FEF75_females_Xspline');
    expect(thrown(() => parseGli2012Csv(coefficients, renamed)).message).toMatch(/lacks the L, M and S spline columns for FEF75 females/);
  });
});

describeWithReference(['nhanes3/coefficients-tables-4-5.csv', 'nhanes3/coefficients-table-6.csv'])('NHANES III CSV checks', () => {
  let quadratic: string;
  let ratio: string;
  beforeAll(() => {
    quadratic = read('nhanes3/coefficients-tables-4-5.csv').toString('utf8');
    ratio = read('nhanes3/coefficients-table-6.csv').toString('utf8');
  });

  it('refuses a table without the LLN height column', () => {
    const renamed = quadratic.replace('a3_ht2_lln', 'a3_lln');
    expect(thrown(() => parseNhanes3Csv(renamed, ratio)).message).toMatch(/lacks the column\(s\) a3_ht2_lln/);
  });

  it('names the combination whose row is missing', () => {
    const rows = quadratic.split(/\r?\n/).filter((row) => !row.startsWith('FVC;female;african_american;child'));
    expect(thrown(() => parseNhanes3Csv(rows.join('\n'), ratio)).message).toMatch(/no row for fvc female african-american child/);
  });

  it('names row and column of a non-numeric coefficient', () => {
    const rows = quadratic.split(/\r?\n/);
    rows[1] = rows[1].replace('-0.7453', 'x');
    expect(thrown(() => parseNhanes3Csv(rows.join('\n'), ratio)).message).toMatch(/row 2, column a0_pred holds "x"/);
  });
});

describe('reference folder', () => {
  it('says which file is missing', async () => {
    const empty = fs.mkdtempSync(path.join(os.tmpdir(), 'tidemark-reference-'));
    const error = await rejection(loadReferenceEquations('gli-2012', empty));
    expect(error.message).toMatch(/need gli2012\/coefficients.csv in the reference folder .*; it is not there/);
  });

  it('needs no files for the built-in ECSC/ERS 1993 equations', async () => {
    const empty = fs.mkdtempSync(path.join(os.tmpdir(), 'tidemark-reference-'));
    const equations = await loadReferenceEquations('ecsc-1993', empty);
    // Quanjer 1993: FEV1 (male) = 4.30 H - 0.029 A - 2.49 = 3.875 L at 1.75 m, 40 y.
    expect(equations.predict({ sex: 'male', ageYears: 40, heightCm: 175 }, 'fev1').predicted).toBeCloseTo(3.875, 10);
  });
});
