import type { ReferenceParameter } from '../../shared/spirometry/model.js';
import { SpirometryInputError } from '../../shared/spirometry/model.js';
import {
  GLI_2012_DEFINITION,
  type Gli2012PublishedCoefficients,
  gli2012Coefficients,
} from '../../shared/spirometry/reference/gli-2012.js';
import type { GliLookupSet, GliParameterTable, GliSplineRow } from '../../shared/spirometry/reference/gli-tables.js';
import { PARAMETER_LABELS } from '../../shared/spirometry/reference/reference-equations.js';
import {
  type DelimitedTable,
  checkSplineAges,
  compactName,
  parameterFromPublishedName,
  parseNumberCell,
  readDelimitedTable,
  sexFromPublishedName,
} from './lookup-table-checks.js';

/** File names used in messages; the loader passes the real paths. */
export interface Gli2012FileNames {
  readonly coefficients: string;
  readonly splines: string;
}

const DEFAULT_NAMES: Gli2012FileNames = { coefficients: 'gli2012/coefficients.csv', splines: 'gli2012/splines.csv' };

/** Every coefficient GLI-2012 publishes for a spirometric parameter (Quanjer 2012 supplement). */
const COEFFICIENT_NAMES = ['a0', 'a1', 'a2', 'a3', 'a4', 'a5', 'a6', 'p0', 'p1', 'p2', 'p3', 'p4', 'p5', 'q0', 'q1'] as const;

type Sex = 'female' | 'male';
const SEXES: readonly Sex[] = ['female', 'male'];
const key = (parameter: ReferenceParameter, sex: Sex) => `${parameter}/${sex}`;
const describe = (parameter: ReferenceParameter, sex: Sex) => `${PARAMETER_LABELS[parameter]} ${sex}s`;

/** Splits a column name such as "FEF25_75_males" into parameter and sex. */
function parameterAndSex(column: string): { parameter: ReferenceParameter; sex: Sex } | null {
  const match = /^(.*)[_ ]([a-z]+)$/i.exec(column.trim());
  if (!match) return null;
  const parameter = parameterFromPublishedName(match[1]);
  const sex = sexFromPublishedName(match[2]);
  return parameter && sex ? { parameter, sex } : null;
}

function readCoefficients(table: DelimitedTable, file: string): Map<string, Gli2012PublishedCoefficients> {
  const decimalComma = table.delimiter === ';';
  const rowByName = new Map(table.rows.map((row) => [compactName(row.cells[0] ?? ''), row]));
  const result = new Map<string, Gli2012PublishedCoefficients>();
  for (const [columnIndex, column] of table.header.entries()) {
    const found = columnIndex === 0 ? null : parameterAndSex(column);
    if (!found || !GLI_2012_DEFINITION.parameters.includes(found.parameter)) continue;
    const values: Record<string, number> = {};
    for (const name of COEFFICIENT_NAMES) {
      const row = rowByName.get(name);
      if (!row) {
        throw new SpirometryInputError('reference-row', `${file} has no row "${name}"; rows a0-a6, p0-p5, q0 and q1 are expected.`, { file });
      }
      values[name] = parseNumberCell(row.cells[columnIndex], { file, row: row.line, column }, decimalComma);
    }
    result.set(key(found.parameter, found.sex), values as unknown as Gli2012PublishedCoefficients);
  }
  return result;
}

function readSplines(table: DelimitedTable, file: string): Map<string, GliParameterTable['splines']> {
  const decimalComma = table.delimiter === ';';
  if (compactName(table.header[0] ?? '') !== 'age') {
    throw new SpirometryInputError('reference-column', `${file}: the first column must be "age", found "${table.header[0]}".`, { file });
  }
  const columns = new Map<string, { l?: number; m?: number; s?: number }>();
  for (const [index, column] of table.header.entries()) {
    const match = /^(.*)[_ ]([lms])\s*spline$/i.exec(column.trim());
    const found = match ? parameterAndSex(match[1]) : null;
    if (!match || !found) continue;
    const entry = columns.get(key(found.parameter, found.sex)) ?? {};
    entry[match[2].toLowerCase() as 'l' | 'm' | 's'] = index;
    columns.set(key(found.parameter, found.sex), entry);
  }
  const result = new Map<string, GliSplineRow[]>();
  for (const parameter of GLI_2012_DEFINITION.parameters) {
    for (const sex of SEXES) {
      const where = `${file}, ${describe(parameter, sex)}`;
      const entry = columns.get(key(parameter, sex));
      if (entry?.l === undefined || entry.m === undefined || entry.s === undefined) {
        throw new SpirometryInputError(
          'reference-column',
          `${file} lacks the L, M and S spline columns for ${describe(parameter, sex)} (e.g. "FEV1_males_Mspline").`,
          { file },
        );
      }
      const indices = { l: entry.l, m: entry.m, s: entry.s };
      const rows: GliSplineRow[] = [];
      const rowNumbers: number[] = [];
      let ended = false;
      for (const row of table.rows) {
        const cells = [indices.m, indices.s, indices.l].map((i) => (row.cells[i] ?? '').trim());
        // FEF tables end at 90 y: their cells are blank below that, which is allowed only at the end.
        if (cells.every((cell) => cell === '')) {
          ended = true;
          continue;
        }
        if (ended) {
          throw new SpirometryInputError('reference-age', `${where}, row ${row.line}: values follow blank rows; ages must be contiguous.`, {
            file,
            row: row.line,
          });
        }
        const at = (index: number, column: string) =>
          parseNumberCell(row.cells[index], { file, row: row.line, column }, decimalComma);
        rows.push({
          ageYears: at(0, table.header[0]),
          mSpline: at(indices.m, table.header[indices.m]),
          sSpline: at(indices.s, table.header[indices.s]),
          lSpline: at(indices.l, table.header[indices.l]),
        });
        rowNumbers.push(row.line);
      }
      const lastAge = GLI_2012_DEFINITION.ageRangeYears[parameter]?.[1] ?? 95;
      checkSplineAges(rows, rowNumbers, lastAge, where);
      result.set(key(parameter, sex), rows);
    }
  }
  return result;
}

/**
 * Parses and checks the GLI-2012 lookup tables in the CSV layout of the reference folder:
 * coefficients (rows a0-a6, p0-p5, q0-q1; one column per parameter and sex, e.g. "FEV1_males")
 * and splines (column "age", then e.g. "FEV1_males_Lspline"; FEF columns blank after 90 y).
 * Columns may come in any order. Throws {@link SpirometryInputError} naming file, row and column.
 */
export function parseGli2012Csv(coefficientsText: string, splinesText: string, names: Gli2012FileNames = DEFAULT_NAMES): GliLookupSet {
  const coefficients = readCoefficients(readDelimitedTable(coefficientsText, names.coefficients), names.coefficients);
  const splines = readSplines(readDelimitedTable(splinesText, names.splines), names.splines);
  const lookup: { female: GliLookupSet['female']; male: GliLookupSet['male'] } = { female: {}, male: {} };
  for (const parameter of GLI_2012_DEFINITION.parameters) {
    for (const sex of SEXES) {
      const published = coefficients.get(key(parameter, sex));
      if (!published) {
        throw new SpirometryInputError(
          'reference-column',
          `${names.coefficients} has no column for ${describe(parameter, sex)} (e.g. "FEV1_males").`,
          { file: names.coefficients },
        );
      }
      lookup[sex][parameter] = { coefficients: gli2012Coefficients(published), splines: splines.get(key(parameter, sex)) ?? [] };
    }
  }
  return lookup;
}
