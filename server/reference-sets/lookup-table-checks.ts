import { parse } from 'csv-parse/sync';
import type { ReferenceParameter } from '../../shared/spirometry/model.js';
import { SpirometryInputError } from '../../shared/spirometry/model.js';
import type { GliSplineRow } from '../../shared/spirometry/reference/gli-tables.js';

/** One data row of a delimited file, with its line number for messages. */
export interface TableRow {
  readonly line: number;
  readonly cells: readonly string[];
}

/** A delimited file split into a header and data rows (blank lines dropped). */
export interface DelimitedTable {
  readonly header: readonly string[];
  readonly rows: readonly TableRow[];
  readonly delimiter: ',' | ';';
}

/**
 * Reads a CSV with ',' or ';' as separator, chosen from the header line: publishers and
 * spreadsheet exports in many locales use ';'. Rows may be shorter than the header (trailing
 * empty cells dropped by some exporters); longer rows are an error.
 */
export function readDelimitedTable(text: string, file: string): DelimitedTable {
  const firstLine = text.replace(/^\uFEFF/, '').split(/\r?\n/, 1)[0] ?? '';
  const delimiter = firstLine.includes(';') ? ';' : ',';
  let records: { record: string[]; info: { lines: number } }[];
  try {
    // With `info: true` csv-parse returns { record, info } objects; its typings do not express that.
    records = parse(text, { delimiter, bom: true, trim: true, relax_column_count: true, info: true, skip_empty_lines: true }) as unknown as typeof records;
  } catch (error) {
    throw new SpirometryInputError('reference-csv', `${file} cannot be read as CSV: ${(error as Error).message}`, { file });
  }
  const nonBlank = records.filter((r) => r.record.some((cell) => cell !== ''));
  if (nonBlank.length === 0) throw new SpirometryInputError('reference-csv', `${file} is empty.`, { file });
  const [headerRecord, ...dataRecords] = nonBlank;
  const header = headerRecord.record;
  const rows = dataRecords.map(({ record, info }) => {
    if (record.length > header.length) {
      throw new SpirometryInputError(
        'reference-csv',
        `${file}, row ${info.lines}: ${record.length} cells but the header has ${header.length}.`,
        { file, row: info.lines },
      );
    }
    return { line: info.lines, cells: record };
  });
  return { header, rows, delimiter };
}

const NUMBER_PATTERN = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/;

/**
 * A numeric cell; `where` names file/sheet, row and column for the message. With ';' as the
 * separator a decimal comma is accepted, since such files often come from locales that use it.
 */
export function parseNumberCell(
  raw: string | undefined,
  where: { file: string; row: number; column: string },
  decimalComma = false,
): number {
  const text = (raw ?? '').trim();
  const normalized = decimalComma ? text.replace(',', '.') : text;
  if (!NUMBER_PATTERN.test(normalized)) {
    const shown = text === '' ? 'is empty' : `holds "${text}"`;
    throw new SpirometryInputError(
      'reference-number',
      `${where.file}, row ${where.row}, column ${where.column} ${shown}; a number is expected.`,
      { file: where.file, row: where.row, column: where.column },
    );
  }
  return Number(normalized);
}

/** Lower case with everything but letters and digits removed, for tolerant name matching. */
export function compactName(name: string): string {
  return name.toLowerCase().replace(/[^a-z0-9]/g, '');
}

const PUBLISHED_PARAMETER_NAMES: Readonly<Record<string, ReferenceParameter>> = {
  fev1: 'fev1',
  fvc: 'fvc',
  fev1fvc: 'fev1Fvc',
  fef2575: 'fef2575',
  fef75: 'fef75',
  pef: 'pef',
  pefr: 'pef',
  fev6: 'fev6',
};

/** Tidemark's parameter for a publisher's name such as "FEV1FVC", "FEF25_75" or "FEV1 FVC". */
export function parameterFromPublishedName(name: string): ReferenceParameter | null {
  return PUBLISHED_PARAMETER_NAMES[compactName(name)] ?? null;
}

/** Sex from "male", "males", "female", "females" (any case). */
export function sexFromPublishedName(name: string): 'female' | 'male' | null {
  const compact = compactName(name);
  if (compact === 'female' || compact === 'females') return 'female';
  if (compact === 'male' || compact === 'males') return 'male';
  return null;
}

/** GLI lookup tables start at 3 y and advance in quarter years. */
export const GLI_FIRST_AGE_YEARS = 3;
export const GLI_AGE_STEP_YEARS = 0.25;

/**
 * Checks that spline rows start at 3 y, advance by 0.25 y without gaps and reach `lastAgeYears`;
 * a gap would make interpolation silently span it. `rowNumbers[i]` is the file row of `rows[i]`.
 */
export function checkSplineAges(
  rows: readonly GliSplineRow[],
  rowNumbers: readonly number[],
  lastAgeYears: number,
  where: string,
): void {
  const fail = (message: string, row?: number) => {
    throw new SpirometryInputError('reference-age', `${where}${row === undefined ? '' : `, row ${row}`}: ${message}`, {
      file: where,
      row,
      column: 'age',
    });
  };
  if (rows.length === 0) fail('no age rows were found.');
  rows.forEach((row, index) => {
    const expected = GLI_FIRST_AGE_YEARS + index * GLI_AGE_STEP_YEARS;
    if (Math.abs(row.ageYears - expected) > 1e-9) {
      fail(
        `age ${row.ageYears} where ${expected} was expected; ages must run from ${GLI_FIRST_AGE_YEARS} y in steps of ${GLI_AGE_STEP_YEARS} y with none missing.`,
        rowNumbers[index],
      );
    }
  });
  const last = rows[rows.length - 1].ageYears;
  if (last < lastAgeYears - 1e-9) fail(`ages stop at ${last} y; the table must reach ${lastAgeYears} y.`);
}
