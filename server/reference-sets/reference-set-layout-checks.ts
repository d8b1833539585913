/**
 * @packageDocumentation
 * Layout checks of an imported reference file that list every problem, not only the first:
 * the tables and columns the set needs, ages from 3 y in quarter years with none missing, and a
 * number in every cell the equations read. The parsers in this folder stop at the first problem;
 * they run afterwards, on a file these checks passed, to build the equations.
 */
import type ExcelJS from 'exceljs';
import type { ReferenceSetCheck } from '../../shared/contracts/reference-sets.js';
import type { ReferenceParameter } from '../../shared/spirometry/model.js';
import { SpirometryInputError } from '../../shared/spirometry/model.js';
import { GLI_2012_DEFINITION } from '../../shared/spirometry/reference/gli-2012.js';
import { GLI_GLOBAL_2022_DEFINITION } from '../../shared/spirometry/reference/gli-global-2022.js';
import { PARAMETER_LABELS } from '../../shared/spirometry/reference/reference-equations.js';
import { parseGliEquation } from './gli-equation-text.js';
import { cellText, sheetSubject } from './gli-global-workbook.js';
import {
  type DelimitedTable,
  GLI_AGE_STEP_YEARS,
  GLI_FIRST_AGE_YEARS,
  compactName,
  parameterFromPublishedName,
  parseNumberCell,
  readDelimitedTable,
  sexFromPublishedName,
} from './lookup-table-checks.js';
import { QUADRATIC_COLUMNS, RATIO_COLUMNS } from './nhanes3-csv.js';

type Sex = 'female' | 'male';
const SEXES: readonly Sex[] = ['male', 'female'];

/** Non-numeric cells listed per table before the rest are counted. */
const LISTED_CELL_PROBLEMS = 10;
/** Runs of missing ages listed per table before the rest are counted. */
const LISTED_AGE_GAPS = 10;

/** Checks and problems collected while a file is read. */
export class Findings {
  readonly checks: ReferenceSetCheck[] = [];
  readonly problems: string[] = [];

  /** Records one check; it passes when `problems` is empty, and they join the file's list. */
  check(subject: string, expected: string, found: string, problems: readonly string[] = []): void {
    this.checks.push({ subject, expected, found, passed: problems.length === 0 });
    this.problems.push(...problems);
  }
}

/** Non-numeric cells of one table: the first few in full, the rest counted. */
class CellProblems {
  readonly listed: string[] = [];
  private unlisted = 0;
  checked = 0;

  constructor(private readonly where: string) {}

  /** The number in a cell, or null after noting the problem. */
  read(raw: string | undefined, at: { file: string; row: number; column: string }, decimalComma = false): number | null {
    this.checked++;
    try {
      return parseNumberCell(raw, at, decimalComma);
    } catch (error) {
      // parseNumberCell reports a non-number by throwing; here every such cell is counted, not only the first.
      if (!(error instanceof SpirometryInputError)) throw error;
      if (this.listed.length < LISTED_CELL_PROBLEMS) this.listed.push(error.message);
      else this.unlisted++;
      return null;
    }
  }

  get count(): number {
    return this.listed.length + this.unlisted;
  }

  problems(): string[] {
    return this.unlisted === 0 ? this.listed : [...this.listed, `${this.where}: ${this.unlisted} more cells are not numbers.`];
  }

  /** Records the numbers check of this table. */
  report(findings: Findings, subject: string, cells: string): void {
    findings.check(
      subject,
      `a number in every ${cells} cell`,
      this.count === 0 ? `${this.checked} cells, all numbers` : `${this.count} of ${this.checked} cells are not numbers`,
      this.problems(),
    );
  }
}

const ageText = (index: number) => String(GLI_FIRST_AGE_YEARS + index * GLI_AGE_STEP_YEARS);

/**
 * Whether a table's ages run from 3 y in quarter years up to `lastAgeYears` with none missing,
 * repeated or out of order (the engine interpolates between neighbouring rows, so a gap would be
 * bridged silently). Records the check and lists each problem with its row.
 */
export function checkAges(
  findings: Findings,
  subject: string,
  where: string,
  ages: readonly { ageYears: number; row: number }[],
  lastAgeYears: number,
): void {
  const lastIndex = Math.round((lastAgeYears - GLI_FIRST_AGE_YEARS) / GLI_AGE_STEP_YEARS);
  const expected = `${GLI_FIRST_AGE_YEARS}-${lastAgeYears} y in steps of ${GLI_AGE_STEP_YEARS} y (${lastIndex + 1} rows)`;
  if (ages.length === 0) {
    findings.check(subject, expected, 'no age rows', [`${where}: no age rows were found.`]);
    return;
  }
  const problems: string[] = [];
  const rowOfIndex = new Map<number, number>();
  let highest = -1;
  for (const { ageYears, row } of ages) {
    const quarters = (ageYears - GLI_FIRST_AGE_YEARS) / GLI_AGE_STEP_YEARS;
    const index = Math.round(quarters);
    if (index < 0 || Math.abs(quarters - index) > 1e-6) {
      problems.push(`${where}, row ${row}: age ${ageYears} y is not one of the table's ages (${GLI_FIRST_AGE_YEARS} y onwards in steps of ${GLI_AGE_STEP_YEARS} y).`);
    } else if (rowOfIndex.has(index)) {
      problems.push(`${where}, row ${row}: age ${ageYears} y appears a second time (first in row ${rowOfIndex.get(index)}).`);
    } else if (index < highest) {
      problems.push(`${where}, row ${row}: age ${ageYears} y comes after age ${ageText(highest)} y; ages must increase.`);
      rowOfIndex.set(index, row);
    } else {
      rowOfIndex.set(index, row);
      highest = index;
    }
  }
  const gaps: string[] = [];
  for (let index = 0; index <= lastIndex; index++) {
    if (rowOfIndex.has(index)) continue;
    let end = index;
    while (end + 1 <= lastIndex && !rowOfIndex.has(end + 1)) end++;
    gaps.push(end === index ? `${ageText(index)} y` : `${ageText(index)}-${ageText(end)} y`);
    index = end;
  }
  if (gaps.length > 0) {
    const shown = gaps.slice(0, LISTED_AGE_GAPS).join(', ') + (gaps.length > LISTED_AGE_GAPS ? ` and ${gaps.length - LISTED_AGE_GAPS} more gaps` : '');
    problems.push(`${where}: ages ${shown} are missing; the table must run from ${GLI_FIRST_AGE_YEARS} y to ${lastAgeYears} y in steps of ${GLI_AGE_STEP_YEARS} y with none missing.`);
  }
  const values = ages.map((age) => age.ageYears);
  findings.check(subject, expected, `${Math.min(...values)}-${Math.max(...values)} y, ${ages.length} rows`, problems);
}

/** Plain text of a cell, with Excel's error values (#N/A, #REF!) shown as they appear. */
function cellString(value: ExcelJS.CellValue): string {
  if (value !== null && typeof value === 'object' && 'error' in value) return String(value.error);
  return cellText(value).trim();
}

const SPLINE_HEADERS = { age: 'Age', mspline: 'M Spline', sspline: 'S Spline', lspline: 'L Spline' } as const;
type SplineHeader = keyof typeof SPLINE_HEADERS;

function sheetLabel(sex: Sex, parameter: ReferenceParameter): string {
  return `${sex === 'male' ? 'Male' : 'Female'} ${PARAMETER_LABELS[parameter].replace('/', ' ')}`;
}

/**
 * Checks the GLI Global lookup workbook (Bowerman 2023 supplement): one sheet per sex and
 * parameter, each with Age, M Spline, S Spline and L Spline from 3 to 95 y and the M, S and L
 * equations written beside the table.
 */
export async function checkGliGlobalWorkbook(findings: Findings, bytes: Buffer, file: string): Promise<void> {
  // exceljs is loaded at the first workbook, not at start: the server needs it only then.
  const { default: excel } = await import('exceljs');
  const workbook = new excel.Workbook();
  try {
    await workbook.xlsx.load(bytes as unknown as ExcelJS.Buffer);
  } catch (error) {
    // exceljs throws plain errors for a zip that is not a workbook; the file is refused in words.
    findings.check('Workbook', 'an Excel workbook (.xlsx) that opens', 'it does not open', [
      `${file} cannot be read as an Excel workbook (.xlsx): ${(error as Error).message}`,
    ]);
    return;
  }
  const sheetOf = new Map<string, ExcelJS.Worksheet>();
  const sheetProblems: string[] = [];
  for (const sheet of workbook.worksheets) {
    const subject = sheetSubject(sheet.name);
    if (!subject || !GLI_GLOBAL_2022_DEFINITION.parameters.includes(subject.parameter)) continue;
    const key = `${subject.sex}/${subject.parameter}`;
    const earlier = sheetOf.get(key);
    if (earlier) sheetProblems.push(`${file}: sheets "${earlier.name}" and "${sheet.name}" hold the same table.`);
    else sheetOf.set(key, sheet);
  }
  const wanted = SEXES.flatMap((sex) => GLI_GLOBAL_2022_DEFINITION.parameters.map((parameter) => ({ sex, parameter })));
  const missing = wanted.filter(({ sex, parameter }) => !sheetOf.has(`${sex}/${parameter}`));
  const names = workbook.worksheets.map((sheet) => `"${sheet.name}"`).join(', ') || 'none';
  if (missing.length > 0) {
    sheetProblems.push(
      `${file} has no sheet for ${missing.map(({ sex, parameter }) => `${sex} ${PARAMETER_LABELS[parameter]}`).join(', ')} ` +
        `(expected sheets named like ${missing.map(({ sex, parameter }) => `"${sheetLabel(sex, parameter)}"`).join(', ')}); sheets found: ${names}.`,
    );
  }
  findings.check('Sheets', wanted.map(({ sex, parameter }) => sheetLabel(sex, parameter)).join(', '), names, sheetProblems);

  for (const { sex, parameter } of wanted) {
    const sheet = sheetOf.get(`${sex}/${parameter}`);
    if (sheet) checkGliSheet(findings, sheet, file, GLI_GLOBAL_2022_DEFINITION.ageRangeYears[parameter]?.[1] ?? 95);
  }
}

function checkGliSheet(findings: Findings, sheet: ExcelJS.Worksheet, file: string, lastAgeYears: number): void {
  const where = `${file}, sheet "${sheet.name}"`;
  const subject = (what: string) => `Sheet "${sheet.name}": ${what}`;
  const texts: { row: number; column: number; text: string }[] = [];
  sheet.eachRow({ includeEmpty: false }, (row, rowNumber) => {
    row.eachCell({ includeEmpty: false }, (cell, column) => {
      const text = cellString(cell.value);
      if (text !== '') texts.push({ row: rowNumber, column, text });
    });
  });
  const expectedColumns = Object.values(SPLINE_HEADERS).join(', ');
  const ageHeader = texts.find((t) => compactName(t.text) === 'age');
  if (!ageHeader) {
    findings.check(subject('columns'), expectedColumns, 'no "Age" header', [`${where}: no "Age" header cell was found.`]);
    return;
  }
  const headerCells = texts.filter((t) => t.row === ageHeader.row);
  const columnOf: Partial<Record<SplineHeader, number>> = {};
  for (const cell of headerCells) {
    const name = compactName(cell.text);
    if (name in SPLINE_HEADERS && columnOf[name as SplineHeader] === undefined) columnOf[name as SplineHeader] = cell.column;
  }
  const missing = (Object.keys(SPLINE_HEADERS) as SplineHeader[]).filter((name) => columnOf[name] === undefined);
  findings.check(
    subject('columns'),
    expectedColumns,
    headerCells.map((cell) => cell.text).join(', '),
    missing.length === 0
      ? []
      : [`${where}, row ${ageHeader.row}: the header lacks ${missing.map((name) => SPLINE_HEADERS[name]).join(', ')}; expected ${expectedColumns}.`],
  );
  if (missing.length > 0) return;

  const cells = new CellProblems(where);
  const ages: { ageYears: number; row: number }[] = [];
  for (let rowNumber = ageHeader.row + 1; rowNumber <= sheet.rowCount; rowNumber++) {
    const row = sheet.getRow(rowNumber);
    // Rows without an age are notes or blank lines below the table; the parser skips them too.
    if (cellString(row.getCell(columnOf.age as number).value) === '') continue;
    for (const name of Object.keys(SPLINE_HEADERS) as SplineHeader[]) {
      const value = cells.read(cellString(row.getCell(columnOf[name] as number).value), { file: where, row: rowNumber, column: SPLINE_HEADERS[name] });
      if (name === 'age' && value !== null) ages.push({ ageYears: value, row: rowNumber });
    }
  }
  cells.report(findings, subject('numbers'), expectedColumns);
  checkAges(findings, subject('ages'), where, ages, lastAgeYears);

  // The publisher writes each equation as text beside the table: a cell "M", "S" or "L" and the
  // equation (or, for a constant L, a number) in the next cell to the right.
  const splineColumns = new Set(Object.values(columnOf));
  const problems: string[] = [];
  const found: string[] = [];
  for (const symbol of ['M', 'S', 'L'] as const) {
    const labels = texts.filter((t) => t.text === symbol && !splineColumns.has(t.column));
    if (labels.length !== 1) {
      problems.push(
        labels.length === 0
          ? `${where}: no equation for ${symbol} was found (expected a cell "${symbol}" with the equation to its right).`
          : `${where}: ${labels.length} cells label an equation for ${symbol}; expected one.`,
      );
      continue;
    }
    const text = texts.find((t) => t.row === labels[0].row && t.column === labels[0].column + 1)?.text ?? '';
    found.push(`${symbol} = ${text || '(empty)'}`);
    try {
      parseGliEquation(text, symbol, `${where}, row ${labels[0].row}`);
    } catch (error) {
      // parseGliEquation reports an unreadable equation by throwing; collected so the other two are still checked.
      if (!(error instanceof SpirometryInputError)) throw error;
      problems.push(error.message);
    }
  }
  findings.check(subject('equations'), 'M, S and L equations written beside the table', found.join('; ') || 'none', problems);
}

/** A delimited file, or null after noting why it cannot be read. */
function readTable(findings: Findings, text: string, file: string): DelimitedTable | null {
  try {
    return readDelimitedTable(text, file);
  } catch (error) {
    // readDelimitedTable throws for an empty or malformed file; that is this file's one problem.
    if (!(error instanceof SpirometryInputError)) throw error;
    findings.check(`${file}: table`, 'a CSV table with a header row', 'unreadable', [error.message]);
    return null;
  }
}

/** Publisher spellings of the GLI-2012 parameters in column names. */
const GLI_2012_COLUMN_NAMES: Readonly<Partial<Record<ReferenceParameter, string>>> = {
  fev1: 'FEV1',
  fvc: 'FVC',
  fev1Fvc: 'FEV1FVC',
  fef2575: 'FEF25_75',
  fef75: 'FEF75',
};
const GLI_2012_COEFFICIENTS = ['a0', 'a1', 'a2', 'a3', 'a4', 'a5', 'a6', 'p0', 'p1', 'p2', 'p3', 'p4', 'p5', 'q0', 'q1'] as const;
const gli2012Tables = () => SEXES.flatMap((sex) => GLI_2012_DEFINITION.parameters.map((parameter) => ({ sex, parameter })));
const gli2012Column = (parameter: ReferenceParameter, sex: Sex) => `${GLI_2012_COLUMN_NAMES[parameter]}_${sex}s`;

/** Parameter and sex of a column name such as "FEF25_75_males". */
function parameterAndSex(column: string): { parameter: ReferenceParameter; sex: Sex } | null {
  const match = /^(.*)[_ ]([a-z]+)$/i.exec(column.trim());
  const parameter = match ? parameterFromPublishedName(match[1]) : null;
  const sex = match ? sexFromPublishedName(match[2]) : null;
  return parameter && sex ? { parameter, sex } : null;
}

/**
 * Checks the GLI-2012 tables in the reference-folder layout (Quanjer 2012 supplement):
 * coefficients.csv with rows a0-a6, p0-p5, q0-q1 and a column per parameter and sex, and
 * splines.csv with "age" first and L, M and S spline columns per parameter and sex.
 */
export function checkGli2012Tables(findings: Findings, coefficientsText: string, splinesText: string, names: readonly [string, string]): void {
  const [coefficientsFile, splinesFile] = names;
  const coefficients = readTable(findings, coefficientsText, coefficientsFile);
  if (coefficients) {
    const columnIndex = new Map<string, number>();
    coefficients.header.forEach((name, index) => {
      const found = index === 0 ? null : parameterAndSex(name);
      if (found) columnIndex.set(`${found.parameter}/${found.sex}`, index);
    });
    const expectedColumns = gli2012Tables().map(({ parameter, sex }) => gli2012Column(parameter, sex));
    const missingColumns = gli2012Tables().filter(({ parameter, sex }) => !columnIndex.has(`${parameter}/${sex}`));
    findings.check(
      `${coefficientsFile}: columns`,
      expectedColumns.join(', '),
      coefficients.header.slice(1).join(', '),
      missingColumns.length === 0 ? [] : [`${coefficientsFile} lacks the column(s) ${missingColumns.map(({ parameter, sex }) => gli2012Column(parameter, sex)).join(', ')}.`],
    );
    const rowOf = new Map(coefficients.rows.map((row) => [compactName(row.cells[0] ?? ''), row]));
    const missingRows = GLI_2012_COEFFICIENTS.filter((name) => !rowOf.has(name));
    findings.check(
      `${coefficientsFile}: rows`,
      GLI_2012_COEFFICIENTS.join(', '),
      coefficients.rows.map((row) => row.cells[0] ?? '').join(', '),
      missingRows.length === 0 ? [] : [`${coefficientsFile} has no row(s) ${missingRows.join(', ')}; rows a0-a6, p0-p5, q0 and q1 are expected.`],
    );
    const cells = new CellProblems(coefficientsFile);
    for (const index of columnIndex.values()) {
      for (const name of GLI_2012_COEFFICIENTS) {
        const row = rowOf.get(name);
        if (row) cells.read(row.cells[index], { file: coefficientsFile, row: row.line, column: coefficients.header[index] }, coefficients.delimiter === ';');
      }
    }
    cells.report(findings, `${coefficientsFile}: numbers`, 'coefficient');
  }

  const splines = readTable(findings, splinesText, splinesFile);
  if (!splines) return;
  if (compactName(splines.header[0] ?? '') !== 'age') {
    findings.check(`${splinesFile}: columns`, '"age" first', `"${splines.header[0] ?? ''}" first`, [
      `${splinesFile}: the first column must be "age", found "${splines.header[0] ?? ''}".`,
    ]);
    return;
  }
  const splineColumns = new Map<string, Partial<Record<'l' | 'm' | 's', number>>>();
  splines.header.forEach((column, index) => {
    const match = /^(.*)[_ ]([lms])\s*spline$/i.exec(column.trim());
    const found = match ? parameterAndSex(match[1]) : null;
    if (!match || !found) return;
    const entry = splineColumns.get(`${found.parameter}/${found.sex}`) ?? {};
    entry[match[2].toLowerCase() as 'l' | 'm' | 's'] = index;
    splineColumns.set(`${found.parameter}/${found.sex}`, entry);
  });
  const missingSplines = gli2012Tables().flatMap(({ parameter, sex }) =>
    (['L', 'M', 'S'] as const)
      .filter((letter) => splineColumns.get(`${parameter}/${sex}`)?.[letter.toLowerCase() as 'l' | 'm' | 's'] === undefined)
      .map((letter) => `${gli2012Column(parameter, sex)}_${letter}spline`),
  );
  findings.check(
    `${splinesFile}: columns`,
    `age, then L, M and S spline columns for ${gli2012Tables().length} tables (e.g. FEV1_males_Mspline)`,
    `${splines.header.length} columns`,
    missingSplines.length === 0 ? [] : [`${splinesFile} lacks the column(s) ${missingSplines.join(', ')}.`],
  );

  const decimalComma = splines.delimiter === ';';
  const cells = new CellProblems(splinesFile);
  const ageOfRow = splines.rows.map((row) => cells.read(row.cells[0], { file: splinesFile, row: row.line, column: splines.header[0] }, decimalComma));
  for (const { parameter, sex } of gli2012Tables()) {
    const entry = splineColumns.get(`${parameter}/${sex}`);
    if (entry?.l === undefined || entry.m === undefined || entry.s === undefined) continue;
    const indices = [entry.m, entry.s, entry.l];
    const where = `${splinesFile}, ${PARAMETER_LABELS[parameter]} ${sex}s`;
    const ages: { ageYears: number; row: number }[] = [];
    const orderProblems: string[] = [];
    let ended = false;
    splines.rows.forEach((row, rowIndex) => {
      // FEF tables end at 90 y: their cells are blank below that, which is allowed only at the end.
      if (indices.every((index) => (row.cells[index] ?? '').trim() === '')) {
        ended = true;
        return;
      }
      if (ended) {
        if (orderProblems.length === 0) orderProblems.push(`${where}, row ${row.line}: values follow blank rows; ages must be contiguous.`);
        return;
      }
      for (const index of indices) cells.read(row.cells[index], { file: splinesFile, row: row.line, column: splines.header[index] }, decimalComma);
      const ageYears = ageOfRow[rowIndex];
      if (ageYears !== null) ages.push({ ageYears, row: row.line });
    });
    findings.problems.push(...orderProblems);
    checkAges(findings, `${splinesFile}: ${PARAMETER_LABELS[parameter]} ${sex}s ages`, where, ages, GLI_2012_DEFINITION.ageRangeYears[parameter]?.[1] ?? 95);
  }
  cells.report(findings, `${splinesFile}: numbers`, 'age and spline');
}

const NHANES3_NUMBER_COLUMNS = new Set(['a0_pred', 'a0_lln', 'a1_age', 'a2_age2', 'a3_ht2_pred', 'a3_ht2_lln']);

function checkNhanes3Table(findings: Findings, text: string, file: string, required: readonly string[]): void {
  const table = readTable(findings, text, file);
  if (!table) return;
  const header = table.header.map((name) => name.trim().toLowerCase());
  const missing = required.filter((name) => !header.includes(name));
  findings.check(
    `${file}: columns`,
    required.join(', '),
    table.header.join(', '),
    missing.length === 0 ? [] : [`${file} lacks the column(s) ${missing.join(', ')}; expected ${required.join(', ')}.`],
  );
  const cells = new CellProblems(file);
  const numberColumns = required.filter((name) => NHANES3_NUMBER_COLUMNS.has(name) && header.includes(name));
  for (const row of table.rows) {
    for (const column of numberColumns) cells.read(row.cells[header.indexOf(column)], { file, row: row.line, column }, table.delimiter === ';');
  }
  cells.report(findings, `${file}: numbers`, numberColumns.join(', '));
}

/**
 * Checks the NHANES III tables in the reference-folder layout (Hankinson 1999): Tables 4-5 and
 * Table 6 with the columns the loader reads and a number in every coefficient cell. Which rows
 * must be present is checked by the parser that follows.
 */
export function checkNhanes3Tables(findings: Findings, quadraticText: string, ratioText: string, names: readonly [string, string]): void {
  checkNhanes3Table(findings, quadraticText, names[0], QUADRATIC_COLUMNS);
  checkNhanes3Table(findings, ratioText, names[1], RATIO_COLUMNS);
}
