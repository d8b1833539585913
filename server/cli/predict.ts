/**
 * Predicted values from the command line:
 *   npm run --silent predict -- --equations ID [--reference-dir DIR] FILE.csv
 * FILE.csv has the header sex,age,height_cm[,ethnicity]; the output (stdout) is one CSV row per
 * input row with predicted, LLN and ULN of FEV1, FVC, FEV1/FVC, FEF25-75 and FEF75, unrounded,
 * empty where the set has no value. The reference folder defaults to TIDEMARK_REFERENCE_DIR.
 */
import { readFile } from 'node:fs/promises';
import path from 'node:path';
import { parseArgs } from 'node:util';
import { parse } from 'csv-parse/sync';
import { callerWorkingDirectory, loadConfig } from '../config.js';
import type { Demographics, Ethnicity, PredictedValue, ReferenceParameter } from '../../shared/spirometry/model.js';
import { SpirometryInputError } from '../../shared/spirometry/model.js';
import { PARAMETER_LABELS, type ReferenceEquations } from '../../shared/spirometry/reference/reference-equations.js';
import { EQUATIONS_IDS, isEquationsId, loadReferenceEquations } from '../reference-sets/reference-loader.js';

/** Output columns, in contract order: `<name>_predicted,<name>_lln,<name>_uln` for each. */
const OUTPUT_PARAMETERS: readonly { readonly parameter: ReferenceParameter; readonly name: string }[] = [
  { parameter: 'fev1', name: 'fev1' },
  { parameter: 'fvc', name: 'fvc' },
  { parameter: 'fev1Fvc', name: 'fev1fvc' },
  { parameter: 'fef2575', name: 'fef2575' },
  { parameter: 'fef75', name: 'fef75' },
];

const ETHNICITIES: readonly Ethnicity[] = [
  'caucasian',
  'african-american',
  'north-east-asian',
  'south-east-asian',
  'other',
  'mexican-american',
];

const USAGE = `Usage: npm run --silent predict -- --equations ${EQUATIONS_IDS.join('|')} [--reference-dir DIR] FILE.csv`;

class UsageError extends Error {}

interface InputRow {
  readonly line: number;
  readonly demographics: Demographics;
}

function readSex(value: string, line: number): 'female' | 'male' {
  const lower = value.trim().toLowerCase();
  if (lower === 'm' || lower === 'male') return 'male';
  if (lower === 'f' || lower === 'female') return 'female';
  throw new SpirometryInputError('csv-value', `Row ${line}: sex "${value}" is not male/female (or M/F).`, { row: line, column: 'sex' });
}

function readNumber(value: string, line: number, column: string): number {
  const number = value.trim() === '' ? Number.NaN : Number(value);
  if (!Number.isFinite(number)) {
    throw new SpirometryInputError('csv-number', `Row ${line}: ${column} "${value}" is not a number.`, { row: line, column });
  }
  return number;
}

/** Reads and checks the demographics file; throws on the first bad row. */
function readDemographics(text: string, equations: ReferenceEquations): InputRow[] {
  // With `info: true` csv-parse returns { record, info } objects; its typings do not express that.
  const records = parse(text, {
    bom: true,
    trim: true,
    skip_empty_lines: true,
    relax_column_count: true,
    info: true,
  }) as unknown as { record: string[]; info: { lines: number } }[];
  if (records.length === 0) throw new SpirometryInputError('csv-header', 'The input file is empty.');
  const header = records[0].record.map((name) => name.toLowerCase());
  const missing = ['sex', 'age', 'height_cm'].filter((name) => !header.includes(name));
  if (missing.length > 0) {
    throw new SpirometryInputError('csv-header', `The header lacks ${missing.join(', ')}; expected sex,age,height_cm[,ethnicity].`);
  }
  const ethnicityColumn = header.indexOf('ethnicity');
  if (equations.ethnicities && ethnicityColumn < 0) {
    throw new SpirometryInputError('csv-header', `${equations.label} needs an ethnicity column (${equations.ethnicities.join(', ')}).`);
  }
  const cell = (record: string[], name: string) => record[header.indexOf(name)] ?? '';
  return records.slice(1).map(({ record, info }) => {
    const line = info.lines;
    const ethnicityText = ethnicityColumn >= 0 ? (record[ethnicityColumn] ?? '').trim().toLowerCase() : '';
    if (ethnicityText !== '' && !ETHNICITIES.includes(ethnicityText as Ethnicity)) {
      throw new SpirometryInputError('csv-value', `Row ${line}: ethnicity "${ethnicityText}" is not one of ${ETHNICITIES.join(', ')}.`, {
        row: line,
        column: 'ethnicity',
      });
    }
    return {
      line,
      demographics: {
        sex: readSex(cell(record, 'sex'), line),
        ageYears: readNumber(cell(record, 'age'), line, 'age'),
        heightCm: readNumber(cell(record, 'height_cm'), line, 'height_cm'),
        ...(ethnicityText === '' ? {} : { ethnicity: ethnicityText as Ethnicity }),
      },
    };
  });
}

const show = (value: number | null) => (value === null ? '' : String(value));

async function run(argv: string[]): Promise<void> {
  const { values, positionals } = parseArgs({
    args: argv,
    options: { equations: { type: 'string' }, 'reference-dir': { type: 'string' }, help: { type: 'boolean' } },
    allowPositionals: true,
  });
  if (values.help) {
    process.stdout.write(`${USAGE}\n`);
    return;
  }
  const id = values.equations;
  if (!id || !isEquationsId(id)) throw new UsageError(`--equations must be one of ${EQUATIONS_IDS.join(', ')}.`);
  if (positionals.length !== 1) throw new UsageError('Give exactly one input CSV file.');
  const configuredDir = values['reference-dir'] ?? loadConfig().referenceDir;
  const referenceDir = configuredDir === undefined ? undefined : path.resolve(callerWorkingDirectory(), configuredDir);
  if (!referenceDir && id !== 'ecsc-1993') {
    throw new UsageError(`${id} needs reference tables: pass --reference-dir or set TIDEMARK_REFERENCE_DIR.`);
  }
  const equations = await loadReferenceEquations(id, referenceDir ?? '.');
  const rows = readDemographics(await readFile(path.resolve(callerWorkingDirectory(), positionals[0]), 'utf8'), equations);

  const uncovered = OUTPUT_PARAMETERS.filter(({ parameter }) => !equations.parameters.includes(parameter));
  if (uncovered.length > 0) {
    process.stderr.write(`note: ${equations.label} has no ${uncovered.map((p) => PARAMETER_LABELS[p.parameter]).join(', ')} equations; those columns are empty.\n`);
  }
  const lines = [OUTPUT_PARAMETERS.flatMap(({ name }) => [`${name}_predicted`, `${name}_lln`, `${name}_uln`]).join(',')];
  for (const { line, demographics } of rows) {
    const cells: string[] = [];
    const reasons = new Set<string>();
    for (const { parameter } of OUTPUT_PARAMETERS) {
      const value: PredictedValue = equations.predict(demographics, parameter);
      cells.push(show(value.predicted), show(value.lln), show(value.uln));
      if (value.reason && equations.parameters.includes(parameter)) reasons.add(value.reason);
    }
    for (const reason of reasons) process.stderr.write(`note: row ${line}: ${reason}\n`);
    lines.push(cells.join(','));
  }
  process.stdout.write(`${lines.join('\n')}\n`);
}

run(process.argv.slice(2)).catch((error: unknown) => {
  // Expected problems (bad arguments, bad files) are reported in words; anything else with its stack.
  if (error instanceof UsageError) {
    process.stderr.write(`predict: ${error.message}\n${USAGE}\n`);
    process.exitCode = 2;
  } else if (error instanceof SpirometryInputError || (error as { code?: string }).code === 'ERR_PARSE_ARGS_UNKNOWN_OPTION') {
    process.stderr.write(`predict: ${(error as Error).message}\n`);
    process.exitCode = 1;
  } else if ((error as NodeJS.ErrnoException).code === 'ENOENT' || (error as Error).name === 'CsvError') {
    process.stderr.write(`predict: ${(error as Error).message}\n`);
    process.exitCode = 1;
  } else {
    process.stderr.write(`predict: unexpected error: ${(error as Error).stack ?? String(error)}\n`);
    process.exitCode = 1;
  }
});
