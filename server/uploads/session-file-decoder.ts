/**
 * @packageDocumentation
 * Turns the bytes of an uploaded file into the efforts of one session: an effort CSV, a
 * .zip of effort CSVs with an optional session.json, a Tidemark session JSON or a FHIR R4
 * Bundle. Every problem is a {@link SpirometryInputError} whose message names the file or
 * the zip entry, so that the analyze command and the upload pipeline can show it as it is.
 */
import { unzipSync, type UnzipFileInfo } from 'fflate';
import { z } from 'zod';
import { DEFAULT_EFFORT_CSV_OPTIONS, type EffortCsvOptions, parseEffortCsv } from '../../shared/spirometry/effort-csv.js';
import { parseFhirBundle } from '../../shared/spirometry/fhir-bundle.js';
import { type Demographics, type Recording, SpirometryInputError } from '../../shared/spirometry/model.js';
import {
  type SessionDocument,
  type SessionMetadata,
  calibrationCheckSchema,
  parseSessionDocument,
  sessionDocumentToRecordings,
  sessionMetadataSchema,
} from '../../shared/spirometry/session-document.js';

/** The kinds of file Tidemark reads as one session. */
export type UploadFormat = 'effort-csv' | 'effort-zip' | 'tidemark-session-json' | 'fhir-bundle';

/** One calibration (syringe) check as a session file states it. */
export type CalibrationCheckInput = z.infer<typeof calibrationCheckSchema>;

/** What one uploaded file holds, ready for the engine. */
export interface DecodedSessionFile {
  readonly format: UploadFormat;
  /** The efforts: in document order, or in entry-name order for a zip. */
  readonly recordings: Recording[];
  /** The session's metadata; `{}` when the file carries none. */
  readonly metadata: SessionMetadata;
  /** Calibration checks the file carries; `[]` when none. */
  readonly calibrationChecks: CalibrationCheckInput[];
}

/** Bounds on what a file may make the server do. */
export interface DecodeLimits {
  /** Largest total a zip may expand to (bytes). */
  readonly maxExpandedBytes: number;
  /** Most entries a zip may list, folders included. */
  readonly maxEntries: number;
  /** Largest expanded/stored size ratio of one zip entry over 1 MB. */
  readonly maxCompressionRatio: number;
  /** Lowest sampling rate accepted for an effort CSV (Hz). */
  readonly minSampleRateHz: number;
}

/** Entries up to this size are never called a zip bomb: small files of repeated values compress very well. */
const COMPRESSION_RATIO_FLOOR_BYTES = 1024 * 1024;
const ZIP_LOCAL_FILE_HEADER = [0x50, 0x4b, 0x03, 0x04];
const ZIP_EMPTY_ARCHIVE = [0x50, 0x4b, 0x05, 0x06];
const OPEN_BRACE = 0x7b;
const ZIP_STORED = 0;
const ZIP_DEFLATED = 8;

/**
 * Which kind of file this is, judged by its content (zip signature, a JSON object with
 * `resourceType: "Bundle"` or not, an effort CSV header starting `time_s,`), with the file
 * extension only breaking ties. Throws `empty`, `unknown-format`, or `encoding`/`json` for a
 * JSON file that cannot be read.
 */
export function detectUploadFormat(fileName: string, bytes: Uint8Array): UploadFormat {
  return sniff(fileName, bytes).format;
}

/** Reads one uploaded file into the efforts, metadata and calibration checks of a session. */
export function decodeSessionFile(fileName: string, bytes: Uint8Array, limits: DecodeLimits): DecodedSessionFile {
  const { format, json } = sniff(fileName, bytes);
  switch (format) {
    case 'effort-csv':
      return decodedCsvs([{ name: fileName, bytes }], limits);
    case 'effort-zip':
      return decodeZip(fileName, bytes, limits);
    case 'fhir-bundle':
      return decodedDocument(format, parseFhirBundle(json, fileName));
    case 'tidemark-session-json':
      return decodedDocument(format, parseSessionDocument(json, fileName));
  }
}

/** Reads effort CSVs given as separate files, as one session in the order given. */
export function decodeEffortCsvFiles(files: { name: string; bytes: Uint8Array }[], limits: DecodeLimits): DecodedSessionFile {
  if (files.length === 0) throw new SpirometryInputError('empty', 'no effort CSV given');
  return decodedCsvs(files, limits);
}

/** Demographics at test that a session's metadata carries, without the fields the engine does not use. */
export function demographicsAtTest(metadata: SessionMetadata): Partial<Demographics> {
  const { ageYears, heightCm, sex, ethnicity } = metadata.demographics ?? {};
  return {
    ...(ageYears !== undefined ? { ageYears } : {}),
    ...(heightCm !== undefined ? { heightCm } : {}),
    ...(sex !== undefined ? { sex } : {}),
    ...(ethnicity !== undefined ? { ethnicity } : {}),
  };
}

interface Sniffed {
  readonly format: UploadFormat;
  /** The parsed document of a JSON file, so that it is parsed once. */
  readonly json?: unknown;
}

function sniff(fileName: string, bytes: Uint8Array): Sniffed {
  if (bytes.length === 0) throw new SpirometryInputError('empty', `${fileName}: the file is empty`, { file: fileName });
  if (startsWith(bytes, ZIP_LOCAL_FILE_HEADER) || startsWith(bytes, ZIP_EMPTY_ARCHIVE)) return { format: 'effort-zip' };
  const start = firstContentByte(bytes);
  if (bytes[start] === OPEN_BRACE) return sniffJson(fileName, bytes);
  if (startsWithEffortCsvHeader(bytes, start)) return { format: 'effort-csv' };
  const extension = /\.([a-z0-9]+)$/i.exec(fileName)?.[1].toLowerCase();
  if (extension === 'zip') return { format: 'effort-zip' };
  if (extension === 'json') return sniffJson(fileName, bytes);
  if (extension === 'csv') return { format: 'effort-csv' };
  throw new SpirometryInputError(
    'unknown-format',
    `${fileName}: not a format Tidemark reads (expected an effort CSV, a .zip of effort CSVs, Tidemark session JSON or a FHIR R4 Bundle)`,
    { file: fileName },
  );
}

function sniffJson(fileName: string, bytes: Uint8Array): Sniffed {
  const json = parseJson(decodeUtf8(bytes, fileName), fileName);
  const isBundle = (json as { resourceType?: unknown } | null)?.resourceType === 'Bundle';
  return { format: isBundle ? 'fhir-bundle' : 'tidemark-session-json', json };
}

function startsWith(bytes: Uint8Array, prefix: readonly number[]): boolean {
  return prefix.every((byte, i) => bytes[i] === byte);
}

/** Index of the first byte after a UTF-8 byte-order mark and leading whitespace. */
function firstContentByte(bytes: Uint8Array): number {
  let i = startsWith(bytes, [0xef, 0xbb, 0xbf]) ? 3 : 0;
  while (i < bytes.length && (bytes[i] === 0x20 || bytes[i] === 0x09 || bytes[i] === 0x0a || bytes[i] === 0x0d)) i++;
  return i;
}

/** Whether the first line's first cell is `time_s`, as in every effort CSV header. */
function startsWithEffortCsvHeader(bytes: Uint8Array, start: number): boolean {
  const head = new TextDecoder('utf-8').decode(bytes.subarray(start, start + 64));
  return /^time_s[ \t]*,/i.test(head);
}

function decodeUtf8(bytes: Uint8Array, file: string): string {
  try {
    return new TextDecoder('utf-8', { fatal: true }).decode(bytes);
  } catch {
    // TextDecoder throws only a TypeError for bytes that are not UTF-8.
    throw new SpirometryInputError('encoding', `${file}: not UTF-8 text`, { file });
  }
}

function parseJson(text: string, file: string): unknown {
  try {
    return JSON.parse(text);
  } catch (error) {
    // JSON.parse throws only a SyntaxError, whose message says where.
    throw new SpirometryInputError('json', `${file}: not valid JSON (${(error as Error).message})`, { file });
  }
}

function decodedCsvs(files: readonly { name: string; bytes: Uint8Array }[], limits: DecodeLimits): DecodedSessionFile {
  const options = csvOptions(limits);
  const recordings = files.map(({ name, bytes }) => parseEffortCsv(decodeUtf8(bytes, name), name, options));
  return { format: 'effort-csv', recordings, metadata: {}, calibrationChecks: [] };
}

function csvOptions(limits: DecodeLimits): EffortCsvOptions {
  return { ...DEFAULT_EFFORT_CSV_OPTIONS, minSampleRateHz: limits.minSampleRateHz };
}

function decodedDocument(format: UploadFormat, document: SessionDocument): DecodedSessionFile {
  return {
    format,
    recordings: sessionDocumentToRecordings(document),
    metadata: document.metadata,
    calibrationChecks: document.calibrationChecks ?? [],
  };
}

/** Whether a zip entry name stays inside the archive. */
function isSafeEntryName(name: string): boolean {
  if (name.startsWith('/') || name.startsWith('\\') || /^[a-zA-Z]:/.test(name)) return false;
  return !name.split(/[/\\]/).some((segment) => segment === '..');
}

/** What an entry is for: an effort, the session's metadata, or nothing (folders, macOS and hidden files). */
function entryRole(name: string): 'effort' | 'session' | 'ignored' | 'unknown' {
  const base = name.replace(/\\/g, '/').split('/').pop() ?? '';
  if (name.endsWith('/') || name.endsWith('\\') || name.startsWith('__MACOSX/') || base.startsWith('.')) return 'ignored';
  if (base === 'session.json') return 'session';
  return base.toLowerCase().endsWith('.csv') ? 'effort' : 'unknown';
}

/**
 * Checks one entry before it expands. fflate sizes a deflated entry's output by its declared
 * size and copies a stored entry as it is, so the larger of the two sizes bounds what it becomes.
 */
function expandedSizeAllowed(file: string, entry: UnzipFileInfo, limits: DecodeLimits): number {
  if (entry.compression !== ZIP_STORED && entry.compression !== ZIP_DEFLATED) {
    throw new SpirometryInputError(
      'zip',
      `${file}: entry "${entry.name}" uses a compression method Tidemark does not read (method ${entry.compression}); save the archive with standard compression`,
      { file },
    );
  }
  const ratio = entry.originalSize / Math.max(entry.size, 1);
  if (entry.originalSize > COMPRESSION_RATIO_FLOOR_BYTES && ratio > limits.maxCompressionRatio) {
    throw new SpirometryInputError('zip-bomb', `${file}: entry "${entry.name}" expands ${Math.round(ratio)} times its stored size`, { file });
  }
  return Math.max(entry.originalSize, entry.size);
}

function decodeZip(file: string, bytes: Uint8Array, limits: DecodeLimits): DecodedSessionFile {
  const tooLarge = (): SpirometryInputError =>
    new SpirometryInputError('file-too-large', `${file}: expands to more than the ${limits.maxExpandedBytes} bytes accepted`, { file });
  let entryCount = 0;
  let declaredBytes = 0;
  let sessionEntry: string | undefined;
  let entries: Record<string, Uint8Array>;
  try {
    entries = unzipSync(bytes, {
      // Checked before anything is expanded: a hostile name or a zip bomb never reaches memory.
      filter: (entry) => {
        entryCount++;
        if (entryCount > limits.maxEntries) {
          throw new SpirometryInputError('zip-entries', `${file}: holds more than the ${limits.maxEntries} entries accepted`, { file });
        }
        if (!isSafeEntryName(entry.name)) {
          throw new SpirometryInputError('zip-path', `${file}: entry "${entry.name}" points outside the archive`, { file });
        }
        const role = entryRole(entry.name);
        if (role === 'ignored') return false;
        if (role === 'unknown') {
          throw new SpirometryInputError('zip-entry', `${file}: entry "${entry.name}" is neither an effort CSV nor session.json`, { file });
        }
        if (role === 'session') {
          if (sessionEntry !== undefined) {
            throw new SpirometryInputError('zip-entry', `${file}: entries "${sessionEntry}" and "${entry.name}" are both session.json`, { file });
          }
          sessionEntry = entry.name;
        }
        declaredBytes += expandedSizeAllowed(file, entry, limits);
        if (declaredBytes > limits.maxExpandedBytes) throw tooLarge();
        return true;
      },
    });
  } catch (error) {
    if (error instanceof SpirometryInputError) throw error;
    // Anything else fflate throws means the bytes are not a zip it can read.
    throw new SpirometryInputError('zip', `${file}: not a readable zip archive (truncated or damaged)`, { file });
  }
  // fflate trusts the sizes in the headers; the bytes actually held must keep to the same limit.
  const actualBytes = Object.values(entries).reduce((sum, entry) => sum + entry.length, 0);
  if (actualBytes > limits.maxExpandedBytes) throw tooLarge();

  const csvNames = Object.keys(entries).filter((name) => entryRole(name) === 'effort');
  if (csvNames.length === 0) throw new SpirometryInputError('zip-empty', `${file}: the archive holds no effort CSV`, { file });
  csvNames.sort((a, b) => (a < b ? -1 : a > b ? 1 : 0));
  const { recordings } = decodedCsvs(
    csvNames.map((name) => ({ name, bytes: entries[name] })),
    limits,
  );
  const session = sessionEntry === undefined ? undefined : parseZipSessionJson(entries[sessionEntry], `${file}/${sessionEntry}`);
  return { format: 'effort-zip', recordings, metadata: session?.metadata ?? {}, calibrationChecks: session?.calibrationChecks ?? [] };
}

/** A zip's session.json in full form; keys other than these two are not read. */
const zipSessionSchema = z.object({
  metadata: sessionMetadataSchema,
  calibrationChecks: z.array(calibrationCheckSchema).optional(),
});

/** The session.json of a zip: the session's metadata bare, or an object with "metadata" and optional "calibrationChecks". */
function parseZipSessionJson(bytes: Uint8Array, file: string): { metadata: SessionMetadata; calibrationChecks?: CalibrationCheckInput[] } {
  const json = parseJson(decodeUtf8(bytes, file), file);
  if (json !== null && typeof json === 'object' && 'metadata' in json) {
    const full = zipSessionSchema.safeParse(json);
    if (!full.success) throw sessionJsonError(full.error, file);
    return full.data;
  }
  const bare = sessionMetadataSchema.safeParse(json);
  if (!bare.success) throw sessionJsonError(bare.error, file);
  return { metadata: bare.data };
}

/** The first problem zod found, with its path, e.g. `calibrationChecks[0].checkedAt`. */
function sessionJsonError(error: z.ZodError, file: string): SpirometryInputError {
  const issue = error.issues[0];
  const path = issue.path.map((key) => (typeof key === 'number' ? `[${key}]` : `.${String(key)}`)).join('');
  const where = path.replace(/^\./, '') || '(document)';
  return new SpirometryInputError('session-json', `${file}: ${where}: ${issue.message}`, { file, column: where });
}
