import fs from 'node:fs';
import path from 'node:path';
import { parse } from 'csv-parse/sync';
import { describe } from '@jest/globals';

/**
 * The published reference data used as the outside check (see its README). It is not part of
 * the repository; suites that need it skip, with a warning, when it is absent.
 */
export const REFERENCE_DIR = path.resolve(process.env['TIDEMARK_TEST_REFERENCE_DIR'] ?? path.resolve(process.cwd(), '../shared/reference'));

/** `describe` when the reference folder holds `relativeFiles`, else `describe.skip` with a warning. */
export function describeWithReference(relativeFiles: readonly string[]): typeof describe.skip {
  const missing = relativeFiles.filter((file) => !fs.existsSync(path.join(REFERENCE_DIR, file)));
  if (missing.length === 0) return describe;
  console.warn(
    `Skipping reference checks: ${missing.join(', ')} not found under ${REFERENCE_DIR} (set TIDEMARK_TEST_REFERENCE_DIR).`,
  );
  return describe.skip;
}

/** Reads a reference CSV as objects keyed by header (independently of the product's parsers). */
export function readReferenceCsv(relativeFile: string, delimiter = ','): Record<string, string>[] {
  return parse(fs.readFileSync(path.join(REFERENCE_DIR, relativeFile), 'utf8'), {
    columns: true,
    delimiter,
    bom: true,
    trim: true,
    skip_empty_lines: true,
  }) as Record<string, string>[];
}

/** Ethnic group codes of the GLI calculator's input files (1 Caucasian ... 5 Other/mixed). */
export const GLI_CALCULATOR_ETHNIC_CODES = {
  '1': 'caucasian',
  '2': 'african-american',
  '3': 'north-east-asian',
  '4': 'south-east-asian',
  '5': 'other',
} as const;
