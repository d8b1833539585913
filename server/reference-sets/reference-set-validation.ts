/**
 * @packageDocumentation
 * Decides whether an uploaded reference file can be used: it must be the kind of file the set
 * is published as (the GLI Global workbook, or a .zip holding the two CSV tables of GLI-2012 or
 * NHANES III), pass the layout checks, load through the existing parsers, and give the known
 * values of its spot checks. Every problem is listed, in words that name sheet or file, row and column.
 */
import path from 'node:path';
import { unzipSync } from 'fflate';
import {
  EQUATIONS_SHORT_NAMES,
  type ImportableEquationsId,
  type ReferenceSetValidation,
} from '../../shared/contracts/reference-sets.js';
import { SpirometryInputError } from '../../shared/spirometry/model.js';
import type { ReferenceEquations } from '../../shared/spirometry/reference/reference-equations.js';
import { REFERENCE_FILES, referenceEquationsFromFiles } from './reference-loader.js';
import { Findings, checkGli2012Tables, checkGliGlobalWorkbook, checkNhanes3Tables } from './reference-set-layout-checks.js';
import { runSpotChecks, spotCheckProblem } from './reference-set-spot-checks.js';

/** Largest reference file accepted; the publisher's files are well under 1 MB. */
export const REFERENCE_FILE_MAX_BYTES = 20 * 1024 * 1024;
/** Largest table a .zip entry may expand to. */
const MAX_TABLE_BYTES = 20 * 1024 * 1024;

/** What validation made of a file. */
export interface ReferenceFileValidation {
  readonly validation: ReferenceSetValidation;
  /** The equations built from the file; null when it has problems. */
  readonly equations: ReferenceEquations | null;
}

/** The files of a set, in the order of {@link REFERENCE_FILES}, with names for messages. */
interface ReferenceFiles {
  readonly files: Buffer[];
  readonly names: string[];
}

type ContentKind = 'zip' | 'empty' | 'png' | 'jpeg' | 'gif' | 'pdf' | 'legacy-office' | 'text' | 'binary';

const CONTENT_NAMES: Readonly<Record<ContentKind, string>> = {
  zip: 'a zip container',
  empty: 'empty',
  png: 'a PNG image',
  jpeg: 'a JPEG image',
  gif: 'a GIF image',
  pdf: 'a PDF document',
  'legacy-office': 'an Excel 97-2003 workbook (.xls) or another older Office file',
  text: 'a text file',
  binary: 'a binary file of unknown kind',
};

const SIGNATURES: readonly { kind: ContentKind; bytes: readonly number[] }[] = [
  { kind: 'zip', bytes: [0x50, 0x4b, 0x03, 0x04] },
  { kind: 'png', bytes: [0x89, 0x50, 0x4e, 0x47] },
  { kind: 'jpeg', bytes: [0xff, 0xd8, 0xff] },
  { kind: 'gif', bytes: [0x47, 0x49, 0x46, 0x38] },
  { kind: 'pdf', bytes: [0x25, 0x50, 0x44, 0x46] },
  { kind: 'legacy-office', bytes: [0xd0, 0xcf, 0x11, 0xe0] },
];

/** What a file is, judged by its first bytes: the name can say .xlsx over a PNG. */
function contentKind(bytes: Buffer): ContentKind {
  if (bytes.length === 0) return 'empty';
  const match = SIGNATURES.find((signature) => signature.bytes.every((byte, index) => bytes[index] === byte));
  if (match) return match.kind;
  return bytes.subarray(0, 4096).includes(0) ? 'binary' : 'text';
}

const tableNames = (equationsId: ImportableEquationsId) => REFERENCE_FILES[equationsId].map((file) => path.posix.basename(file));

/** Opens the upload into the files of its set, or notes why it cannot be. */
function unpack(findings: Findings, equationsId: ImportableEquationsId, originalName: string, bytes: Buffer): ReferenceFiles | null {
  const kind = contentKind(bytes);
  if (equationsId === 'gli-global-2022') {
    const advice = kind === 'legacy-office' ? ' Open it in a spreadsheet program and save it as .xlsx.' : " Upload the publisher's lookup workbook (.xlsx).";
    findings.check(
      'File type',
      'an Excel workbook (.xlsx)',
      kind === 'zip' ? 'an Office Open XML (zip) container' : CONTENT_NAMES[kind],
      kind === 'zip' ? [] : [`${originalName} is not an Excel workbook (.xlsx): it is ${CONTENT_NAMES[kind]}.${advice}`],
    );
    return kind === 'zip' ? { files: [bytes], names: [originalName] } : null;
  }
  const wanted = tableNames(equationsId);
  const expected = `a .zip archive holding ${wanted.join(' and ')}`;
  if (kind !== 'zip') {
    findings.check('File type', expected, CONTENT_NAMES[kind], [
      `${originalName} is ${CONTENT_NAMES[kind]}, not a .zip archive: ${EQUATIONS_SHORT_NAMES[equationsId]} comes as two tables; put ${wanted.join(' and ')} into one .zip and upload that.`,
    ]);
    return null;
  }
  const listed: string[] = [];
  const oversized = new Set<string>();
  const problems: string[] = [];
  let entries: Record<string, Uint8Array>;
  try {
    entries = unzipSync(bytes, {
      // Only the two tables are expanded, and only within the size limit, so a zip bomb never reaches memory.
      filter: (entry) => {
        const base = path.posix.basename(entry.name);
        if (entry.name.endsWith('/') || entry.name.startsWith('__MACOSX/') || base.startsWith('.')) return false;
        listed.push(entry.name);
        if (!wanted.includes(base.toLowerCase())) return false;
        if (entry.originalSize > MAX_TABLE_BYTES) {
          oversized.add(base.toLowerCase());
          problems.push(`${originalName}: entry "${entry.name}" expands to more than the ${MAX_TABLE_BYTES / (1024 * 1024)} MB accepted for a table.`);
          return false;
        }
        return true;
      },
    });
  } catch {
    // fflate throws plain errors for bytes it cannot read as a zip (truncated, damaged, not a zip).
    findings.check('File type', expected, 'an unreadable zip archive', [`${originalName} is not a readable zip archive (truncated or damaged).`]);
    return null;
  }
  const files: Buffer[] = [];
  const names: string[] = [];
  for (const table of wanted) {
    const matches = Object.keys(entries).filter((name) => path.posix.basename(name).toLowerCase() === table);
    if (oversized.has(table)) continue;
    if (matches.length === 0) {
      problems.push(`${originalName} holds no ${table}; ${EQUATIONS_SHORT_NAMES[equationsId]} needs ${wanted.join(' and ')}.`);
    } else if (matches.length > 1) {
      problems.push(`${originalName} holds ${matches.length} files named ${table} (${matches.join(', ')}); keep one.`);
    } else if (entries[matches[0]].length > MAX_TABLE_BYTES) {
      problems.push(`${originalName}: entry "${matches[0]}" expands to more than the ${MAX_TABLE_BYTES / (1024 * 1024)} MB accepted for a table.`);
    } else {
      files.push(Buffer.from(entries[matches[0]]));
      names.push(`${originalName}/${matches[0]}`);
    }
  }
  findings.check('Archive contents', wanted.join(', '), listed.join(', ') || 'no files', problems);
  return problems.length === 0 ? { files, names } : null;
}

async function checkLayout(findings: Findings, equationsId: ImportableEquationsId, { files, names }: ReferenceFiles): Promise<void> {
  switch (equationsId) {
    case 'gli-global-2022':
      return checkGliGlobalWorkbook(findings, files[0], names[0]);
    case 'gli-2012':
      return checkGli2012Tables(findings, files[0].toString('utf8'), files[1].toString('utf8'), [names[0], names[1]]);
    case 'nhanes3':
      return checkNhanes3Tables(findings, files[0].toString('utf8'), files[1].toString('utf8'), [names[0], names[1]]);
  }
}

/** Builds the equations with the loaders every other path uses, or notes their first complaint. */
async function buildEquations(findings: Findings, equationsId: ImportableEquationsId, files: ReferenceFiles): Promise<ReferenceEquations | null> {
  try {
    return await referenceEquationsFromFiles(equationsId, files.files, files.names);
  } catch (error) {
    // The loaders throw SpirometryInputError naming file and row for anything the layout checks let through.
    if (!(error instanceof SpirometryInputError)) throw error;
    findings.check('Tables load', 'the tables load into the equations', 'refused', [error.message]);
    return null;
  }
}

/**
 * Validates an uploaded reference file for one set of equations. Never throws for a bad file:
 * the answer lists every problem; `equations` is set only when there are none.
 */
export async function validateReferenceFile(
  equationsId: ImportableEquationsId,
  originalName: string,
  bytes: Buffer,
): Promise<ReferenceFileValidation> {
  const findings = new Findings();
  const files = unpack(findings, equationsId, originalName, bytes);
  if (files) await checkLayout(findings, equationsId, files);
  let equations = files && findings.problems.length === 0 ? await buildEquations(findings, equationsId, files) : null;
  const spotChecks = equations ? runSpotChecks(equationsId, equations) : [];
  findings.problems.push(...spotChecks.filter((check) => !check.passed).map(spotCheckProblem));
  if (findings.problems.length > 0) equations = null;

  const passed = findings.checks.filter((check) => check.passed).length;
  const agreed = spotChecks.filter((check) => check.passed).length;
  const count = findings.problems.length;
  const summary =
    count > 0
      ? `Refused: ${count} ${count === 1 ? 'problem' : 'problems'}`
      : `${passed} of ${findings.checks.length} layout checks passed; ${agreed} of ${spotChecks.length} spot checks agree`;
  return {
    validation: { equationsId, summary, checks: findings.checks, spotChecks, problems: findings.problems },
    equations,
  };
}

/**
 * Builds the equations from a stored file that was validated at import. Throws
 * {@link SpirometryInputError} when the file can no longer be read (it should not happen).
 */
export async function equationsFromReferenceFile(
  equationsId: ImportableEquationsId,
  originalName: string,
  bytes: Buffer,
): Promise<ReferenceEquations> {
  const findings = new Findings();
  const files = unpack(findings, equationsId, originalName, bytes);
  if (!files) throw new SpirometryInputError('reference-file', findings.problems.join(' '), { file: originalName });
  return referenceEquationsFromFiles(equationsId, files.files, files.names);
}
