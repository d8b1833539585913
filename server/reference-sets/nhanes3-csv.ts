import type { Ethnicity } from '../../shared/spirometry/model.js';
import { SpirometryInputError } from '../../shared/spirometry/model.js';
import {
  NHANES3_ETHNICITIES,
  type Nhanes3Coefficients,
  type Nhanes3QuadraticParameter,
  type Nhanes3QuadraticRow,
  type Nhanes3RatioRow,
} from '../../shared/spirometry/reference/nhanes3.js';
import { type DelimitedTable, compactName, parameterFromPublishedName, parseNumberCell, readDelimitedTable, sexFromPublishedName } from './lookup-table-checks.js';

/** File names used in messages; the loader passes the real paths. */
export interface Nhanes3FileNames {
  readonly quadratic: string;
  readonly ratio: string;
}

const DEFAULT_NAMES: Nhanes3FileNames = {
  quadratic: 'nhanes3/coefficients-tables-4-5.csv',
  ratio: 'nhanes3/coefficients-table-6.csv',
};

/** Columns of Tables 4-5 in the reference-folder layout. */
export const QUADRATIC_COLUMNS = ['parameter', 'sex', 'ethnicity', 'age_group', 'a0_pred', 'a1_age', 'a2_age2', 'a3_ht2_pred', 'a3_ht2_lln'] as const;
/** Columns of Table 6 in the reference-folder layout. */
export const RATIO_COLUMNS = ['parameter', 'sex', 'ethnicity', 'a0_pred', 'a0_lln', 'a1_age'] as const;
const QUADRATIC_PARAMETERS: readonly Nhanes3QuadraticParameter[] = ['fev1', 'fvc', 'fev6', 'pef', 'fef2575'];
/** Published in Table 6 but not a Tidemark parameter; skipped rather than rejected. */
const KNOWN_UNUSED = new Set(['fev1fev6']);

type Cells = (column: string) => string;

function columnIndex(table: DelimitedTable, required: readonly string[], file: string): Cells[] {
  const header = table.header.map((name) => name.trim().toLowerCase());
  const missing = required.filter((name) => !header.includes(name));
  if (missing.length > 0) {
    throw new SpirometryInputError(
      'reference-column',
      `${file} lacks the column(s) ${missing.join(', ')}; expected ${required.join(', ')}.`,
      { file },
    );
  }
  return table.rows.map((row) => (column: string) => row.cells[header.indexOf(column)] ?? '');
}

function readSex(value: string, file: string, row: number): 'female' | 'male' {
  const sex = sexFromPublishedName(value);
  if (!sex) throw new SpirometryInputError('reference-value', `${file}, row ${row}: sex "${value}" is not male or female.`, { file, row, column: 'sex' });
  return sex;
}

function readEthnicity(value: string, file: string, row: number): Ethnicity {
  const normalized = value.trim().toLowerCase().replace(/[_\s]+/g, '-') as Ethnicity;
  if (!NHANES3_ETHNICITIES.includes(normalized)) {
    throw new SpirometryInputError(
      'reference-value',
      `${file}, row ${row}: ethnicity "${value}" is not one of ${NHANES3_ETHNICITIES.join(', ')}.`,
      { file, row, column: 'ethnicity' },
    );
  }
  return normalized;
}

function requireComplete(keys: Set<string>, expected: string[], file: string): void {
  const missing = expected.filter((k) => !keys.has(k));
  if (missing.length > 0) {
    throw new SpirometryInputError('reference-row', `${file} has no row for ${missing.slice(0, 5).join('; ')}${missing.length > 5 ? ` and ${missing.length - 5} more` : ''}.`, {
      file,
    });
  }
}

/**
 * Parses and checks NHANES III coefficients in the layout of the reference folder: Hankinson
 * 1999 Tables 4-5 (parameter;sex;ethnicity;age_group;a0_pred;a1_age;a2_age2;a3_ht2_pred;a3_ht2_lln)
 * and Table 6 (parameter;sex;ethnicity;a0_pred;a0_lln;a1_age, FEV1/FVC in percent). Every
 * parameter present must have rows for both sexes, the three groups and (Tables 4-5) both age groups.
 */
export function parseNhanes3Csv(quadraticText: string, ratioText: string, names: Nhanes3FileNames = DEFAULT_NAMES): Nhanes3Coefficients {
  const quadraticTable = readDelimitedTable(quadraticText, names.quadratic);
  const quadratic: Nhanes3QuadraticRow[] = [];
  const quadraticKeys = new Set<string>();
  columnIndex(quadraticTable, QUADRATIC_COLUMNS, names.quadratic).forEach((cell, index) => {
    const file = names.quadratic;
    const row = quadraticTable.rows[index].line;
    const parameter = parameterFromPublishedName(cell('parameter')) as Nhanes3QuadraticParameter | null;
    if (!parameter || !QUADRATIC_PARAMETERS.includes(parameter)) {
      throw new SpirometryInputError('reference-value', `${file}, row ${row}: parameter "${cell('parameter')}" is not one of FEV1, FVC, FEV6, PEF, FEF25_75.`, {
        file,
        row,
        column: 'parameter',
      });
    }
    const ageGroup = compactName(cell('age_group'));
    if (ageGroup !== 'child' && ageGroup !== 'adult') {
      throw new SpirometryInputError('reference-value', `${file}, row ${row}: age_group "${cell('age_group')}" is not child or adult.`, {
        file,
        row,
        column: 'age_group',
      });
    }
    const sex = readSex(cell('sex'), file, row);
    const ethnicity = readEthnicity(cell('ethnicity'), file, row);
    const decimalComma = quadraticTable.delimiter === ';';
    const num = (column: string) => parseNumberCell(cell(column), { file, row, column }, decimalComma);
    const id = `${parameter} ${sex} ${ethnicity} ${ageGroup}`;
    if (quadraticKeys.has(id)) throw new SpirometryInputError('reference-row', `${file}, row ${row}: a second row for ${id}.`, { file, row });
    quadraticKeys.add(id);
    quadratic.push({
      parameter,
      sex,
      ethnicity,
      ageGroup,
      b0: num('a0_pred'),
      b1Age: num('a1_age'),
      b2AgeSquared: num('a2_age2'),
      b3HeightCmSquaredPredicted: num('a3_ht2_pred'),
      b3HeightCmSquaredLln: num('a3_ht2_lln'),
    });
  });
  const presentParameters = [...new Set(quadratic.map((row) => row.parameter))];
  requireComplete(
    quadraticKeys,
    presentParameters.flatMap((p) =>
      ['female', 'male'].flatMap((s) => NHANES3_ETHNICITIES.flatMap((e) => ['child', 'adult'].map((g) => `${p} ${s} ${e} ${g}`))),
    ),
    names.quadratic,
  );

  const ratioTable = readDelimitedTable(ratioText, names.ratio);
  const ratio: Nhanes3RatioRow[] = [];
  const ratioKeys = new Set<string>();
  columnIndex(ratioTable, RATIO_COLUMNS, names.ratio).forEach((cell, index) => {
    const file = names.ratio;
    const row = ratioTable.rows[index].line;
    const published = compactName(cell('parameter'));
    if (KNOWN_UNUSED.has(published)) return;
    if (parameterFromPublishedName(published) !== 'fev1Fvc') {
      throw new SpirometryInputError('reference-value', `${file}, row ${row}: parameter "${cell('parameter')}" is not FEV1FVC or FEV1FEV6.`, {
        file,
        row,
        column: 'parameter',
      });
    }
    const sex = readSex(cell('sex'), file, row);
    const ethnicity = readEthnicity(cell('ethnicity'), file, row);
    const decimalComma = ratioTable.delimiter === ';';
    const num = (column: string) => parseNumberCell(cell(column), { file, row, column }, decimalComma);
    const id = `fev1fvc ${sex} ${ethnicity}`;
    if (ratioKeys.has(id)) throw new SpirometryInputError('reference-row', `${file}, row ${row}: a second row for ${id}.`, { file, row });
    ratioKeys.add(id);
    ratio.push({
      parameter: 'fev1Fvc',
      sex,
      ethnicity,
      interceptPredictedPercent: num('a0_pred'),
      interceptLlnPercent: num('a0_lln'),
      agePercentPerYear: num('a1_age'),
    });
  });
  if (ratio.length > 0) {
    requireComplete(ratioKeys, ['female', 'male'].flatMap((s) => NHANES3_ETHNICITIES.map((e) => `fev1fvc ${s} ${e}`)), names.ratio);
  }
  return { quadratic, ratio };
}
