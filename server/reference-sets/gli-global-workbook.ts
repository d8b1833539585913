import type ExcelJS from 'exceljs';
import type { ReferenceParameter } from '../../shared/spirometry/model.js';
import { SpirometryInputError } from '../../shared/spirometry/model.js';
import { GLI_GLOBAL_2022_DEFINITION } from '../../shared/spirometry/reference/gli-global-2022.js';
import type { GliCoefficients, GliLookupSet, GliSplineRow } from '../../shared/spirometry/reference/gli-tables.js';
import { PARAMETER_LABELS } from '../../shared/spirometry/reference/reference-equations.js';
import { parseGliEquation } from './gli-equation-text.js';
import { checkSplineAges, compactName, parameterFromPublishedName, parseNumberCell, sexFromPublishedName } from './lookup-table-checks.js';

type Sex = 'female' | 'male';

/** The spline columns each sheet must have, by compact header name. */
const SPLINE_COLUMNS = { age: 'age', mspline: 'mSpline', sspline: 'sSpline', lspline: 'lSpline' } as const;

/** Plain text of a cell, whatever exceljs made of it (shared string, rich text, formula result). */
export function cellText(value: ExcelJS.CellValue): string {
  if (value === null || value === undefined) return '';
  if (typeof value === 'number' || typeof value === 'boolean') return String(value);
  if (typeof value === 'string') return value;
  if (value instanceof Date) return value.toISOString();
  if ('richText' in value) return value.richText.map((part) => part.text).join('');
  if ('result' in value) return value.result === undefined ? '' : cellText(value.result as ExcelJS.CellValue);
  if ('text' in value) return String(value.text);
  return '';
}

/** Which sex and parameter a sheet holds, from names like "Male FEV1" or "Female FEV1 FVC". */
export function sheetSubject(name: string): { sex: Sex; parameter: ReferenceParameter } | null {
  const words = name.toLowerCase().split(/[^a-z0-9]+/).filter(Boolean);
  const sexIndex = words.findIndex((word) => sexFromPublishedName(word) !== null);
  if (sexIndex < 0) return null;
  const sex = sexFromPublishedName(words[sexIndex]) as Sex;
  const parameter = parameterFromPublishedName(words.filter((_, index) => index !== sexIndex).join(''));
  return parameter ? { sex, parameter } : null;
}

interface SheetTable {
  readonly coefficients: GliCoefficients;
  readonly splines: GliSplineRow[];
}

function readSheet(sheet: ExcelJS.Worksheet, file: string, lastAgeYears: number): SheetTable {
  const where = `${file}, sheet "${sheet.name}"`;
  const fail = (code: string, message: string, row?: number): never => {
    throw new SpirometryInputError(code, `${where}${row === undefined ? '' : `, row ${row}`}: ${message}`, { file: sheet.name, row });
  };
  const texts: { row: number; column: number; text: string }[] = [];
  sheet.eachRow({ includeEmpty: false }, (row, rowNumber) => {
    row.eachCell({ includeEmpty: false }, (cell, column) => {
      const text = cellText(cell.value).trim();
      if (text !== '') texts.push({ row: rowNumber, column, text });
    });
  });
  const ageHeader = texts.find((t) => compactName(t.text) === 'age');
  if (!ageHeader) return fail('reference-column', 'no "Age" header cell was found.');
  const headerRow = ageHeader.row;
  const columnOf: Partial<Record<keyof typeof SPLINE_COLUMNS, number>> = {};
  for (const t of texts.filter((t) => t.row === headerRow)) {
    const name = compactName(t.text) as keyof typeof SPLINE_COLUMNS;
    if (name in SPLINE_COLUMNS && columnOf[name] === undefined) columnOf[name] = t.column;
  }
  const missing = Object.keys(SPLINE_COLUMNS).filter((name) => columnOf[name as keyof typeof SPLINE_COLUMNS] === undefined);
  if (missing.length > 0) {
    fail('reference-column', `the header lacks ${missing.join(', ')}; expected Age, M Spline, S Spline and L Spline.`, headerRow);
  }
  const ageColumn = columnOf.age as number;
  const splines: GliSplineRow[] = [];
  const rowNumbers: number[] = [];
  for (let rowNumber = headerRow + 1; rowNumber <= sheet.rowCount; rowNumber++) {
    const row = sheet.getRow(rowNumber);
    const read = (column: number, header: string) =>
      parseNumberCell(cellText(row.getCell(column).value), { file: where, row: rowNumber, column: header });
    if (cellText(row.getCell(ageColumn).value).trim() === '') continue;
    splines.push({
      ageYears: read(ageColumn, 'Age'),
      mSpline: read(columnOf.mspline as number, 'M Spline'),
      sSpline: read(columnOf.sspline as number, 'S Spline'),
      lSpline: read(columnOf.lspline as number, 'L Spline'),
    });
    rowNumbers.push(rowNumber);
  }
  checkSplineAges(splines, rowNumbers, lastAgeYears, where);

  // The publisher writes the equations as text beside the table: a cell "M", "S" or "L" and the
  // equation (or, for a constant L, a number) in the next cell to the right.
  const splineColumns = new Set(Object.values(columnOf));
  const equation = (symbol: 'M' | 'S' | 'L') => {
    const labels = texts.filter((t) => t.text === symbol && !splineColumns.has(t.column));
    if (labels.length !== 1) {
      fail(
        'reference-equation',
        labels.length === 0
          ? `no equation for ${symbol} was found (expected a cell "${symbol}" with the equation to its right).`
          : `${labels.length} cells label an equation for ${symbol}; expected one.`,
      );
    }
    const label = labels[0];
    const text = texts.find((t) => t.row === label.row && t.column === label.column + 1)?.text ?? '';
    return parseGliEquation(text, symbol, `${where}, row ${label.row}`);
  };
  const m = equation('M');
  const s = equation('S');
  const l = equation('L');
  return {
    coefficients: {
      mIntercept: m.constant,
      mLnHeight: m.lnHeight,
      mLnAge: m.lnAge,
      mEthnic: {},
      sIntercept: s.constant,
      sLnAge: s.lnAge,
      sEthnic: {},
      lIntercept: l.constant,
      lLnAge: l.lnAge,
    },
    splines,
  };
}

/**
 * Parses and checks the GLI Global lookup workbook as the publisher distributes it (Bowerman
 * 2023 supplement): one sheet per sex and parameter ("Male FEV1", "Female FEV1 FVC", ...), each
 * with columns Age, M Spline, S Spline, L Spline from 3 to 95 y in quarter years and the M, S
 * and L equations written as text. Throws {@link SpirometryInputError} naming sheet and row.
 */
export async function parseGliGlobalWorkbook(buffer: Buffer | Uint8Array, file = 'lookup-tables.xlsx'): Promise<GliLookupSet> {
  // exceljs is loaded at the first workbook, not at start: the server needs it only then.
  const { default: excel } = await import('exceljs');
  const workbook = new excel.Workbook();
  try {
    await workbook.xlsx.load(Buffer.from(buffer) as unknown as ExcelJS.Buffer);
  } catch (error) {
    throw new SpirometryInputError('reference-workbook', `${file} cannot be read as an Excel workbook (.xlsx): ${(error as Error).message}`, {
      file,
    });
  }
  const lookup: { female: GliLookupSet['female']; male: GliLookupSet['male'] } = { female: {}, male: {} };
  const seen = new Map<string, string>();
  for (const sheet of workbook.worksheets) {
    const subject = sheetSubject(sheet.name);
    if (!subject || !GLI_GLOBAL_2022_DEFINITION.parameters.includes(subject.parameter)) continue;
    const id = `${subject.sex}/${subject.parameter}`;
    const earlier = seen.get(id);
    if (earlier !== undefined) {
      throw new SpirometryInputError('reference-sheet', `${file}: sheets "${earlier}" and "${sheet.name}" hold the same table.`, { file });
    }
    seen.set(id, sheet.name);
    const lastAge = GLI_GLOBAL_2022_DEFINITION.ageRangeYears[subject.parameter]?.[1] ?? 95;
    lookup[subject.sex][subject.parameter] = readSheet(sheet, file, lastAge);
  }
  const names = workbook.worksheets.map((sheet) => `"${sheet.name}"`).join(', ');
  for (const sex of ['male', 'female'] as const) {
    for (const parameter of GLI_GLOBAL_2022_DEFINITION.parameters) {
      if (!lookup[sex][parameter]) {
        const expected = `${sex === 'male' ? 'Male' : 'Female'} ${PARAMETER_LABELS[parameter].replace('/', ' ')}`;
        throw new SpirometryInputError(
          'reference-sheet',
          `${file} has no sheet for ${sex} ${PARAMETER_LABELS[parameter]} (expected a sheet named like "${expected}"); sheets found: ${names || 'none'}.`,
          { file },
        );
      }
    }
  }
  return lookup;
}
