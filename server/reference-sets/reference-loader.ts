import { readFile } from 'node:fs/promises';
import path from 'node:path';
import type { EquationsId } from '../../shared/spirometry/model.js';
import { SpirometryInputError } from '../../shared/spirometry/model.js';
import { ecsc1993Equations } from '../../shared/spirometry/reference/ecsc-1993.js';
import { createGli2012Equations } from '../../shared/spirometry/reference/gli-2012.js';
import { createGliGlobal2022Equations } from '../../shared/spirometry/reference/gli-global-2022.js';
import { createNhanes3Equations } from '../../shared/spirometry/reference/nhanes3.js';
import type { ReferenceEquations } from '../../shared/spirometry/reference/reference-equations.js';
import { parseGli2012Csv } from './gli-2012-csv.js';
import { parseGliGlobalWorkbook } from './gli-global-workbook.js';
import { parseNhanes3Csv } from './nhanes3-csv.js';

/** Every equations id Tidemark knows, in the order shown to users. */
export const EQUATIONS_IDS: readonly EquationsId[] = ['gli-global-2022', 'gli-2012', 'nhanes3', 'ecsc-1993'];

/**
 * Files each set needs, relative to the reference folder (the layout of the operator's
 * reference folder; ECSC 1993 is built in and needs none).
 */
export const REFERENCE_FILES: Readonly<Record<EquationsId, readonly string[]>> = {
  'gli-2012': ['gli2012/coefficients.csv', 'gli2012/splines.csv'],
  'gli-global-2022': ['gli-global-2022/lookup-tables.xlsx'],
  nhanes3: ['nhanes3/coefficients-tables-4-5.csv', 'nhanes3/coefficients-table-6.csv'],
  'ecsc-1993': [],
};

/** Whether a string names a known equations set. */
export function isEquationsId(value: string): value is EquationsId {
  return (EQUATIONS_IDS as readonly string[]).includes(value);
}

async function readReferenceFile(dir: string, relative: string, id: EquationsId): Promise<Buffer> {
  const fullPath = path.join(dir, relative);
  try {
    return await readFile(fullPath);
  } catch (error) {
    // Only a missing or unreadable file is expected here; it is reported in words with the path.
    const reason = (error as NodeJS.ErrnoException).code === 'ENOENT' ? 'it is not there' : (error as Error).message;
    throw new SpirometryInputError('reference-missing', `The ${id} equations need ${relative} in the reference folder ${dir}; ${reason}.`, {
      file: fullPath,
    });
  }
}

/**
 * Loads one set of reference equations from a folder laid out like the reference data:
 * gli2012/coefficients.csv + splines.csv, gli-global-2022/lookup-tables.xlsx (the publisher's
 * workbook), nhanes3/coefficients-tables-4-5.csv + coefficients-table-6.csv. The files are
 * checked as they are parsed; a problem throws {@link SpirometryInputError} naming file and row.
 */
export async function loadReferenceEquations(id: EquationsId, dir: string): Promise<ReferenceEquations> {
  const files = await Promise.all(REFERENCE_FILES[id].map((relative) => readReferenceFile(dir, relative, id)));
  return referenceEquationsFromFiles(id, files, REFERENCE_FILES[id].map((relative) => path.join(dir, relative)));
}

/**
 * Builds one set of reference equations from the bytes of its files, in the order of
 * {@link REFERENCE_FILES} (from a folder, or from an imported archive); `names` are used in
 * messages. Throws {@link SpirometryInputError} naming file and row.
 */
export async function referenceEquationsFromFiles(
  id: EquationsId,
  files: readonly Buffer[],
  names: readonly string[],
): Promise<ReferenceEquations> {
  switch (id) {
    case 'gli-2012':
      return createGli2012Equations(
        parseGli2012Csv(files[0].toString('utf8'), files[1].toString('utf8'), { coefficients: names[0], splines: names[1] }),
      );
    case 'gli-global-2022':
      return createGliGlobal2022Equations(await parseGliGlobalWorkbook(files[0], names[0]));
    case 'nhanes3':
      return createNhanes3Equations(
        parseNhanes3Csv(files[0].toString('utf8'), files[1].toString('utf8'), { quadratic: names[0], ratio: names[1] }),
      );
    case 'ecsc-1993':
      return ecsc1993Equations;
  }
}
