import { describe, expect, it } from '@jest/globals';
import { strToU8, zipSync, type Zippable } from 'fflate';
import { buildFhirBundle } from '../../shared/spirometry/fhir-bundle.js';
import { SpirometryInputError } from '../../shared/spirometry/model.js';
import { SESSION_DOCUMENT_FORMAT, recordingToSessionEffort, type SessionDocument } from '../../shared/spirometry/session-document.js';
import { effortToCsv, generateEffort } from '../../shared/spirometry/synthetic/curve-generator.js';
import { type DecodeLimits, decodeEffortCsvFiles, decodeSessionFile, demographicsAtTest, detectUploadFormat } from './session-file-decoder.js';

const LIMITS: DecodeLimits = { maxExpandedBytes: 10 * 1024 * 1024, maxEntries: 20, maxCompressionRatio: 100, minSampleRateHz: 100 };

/** A healthy generated effort at 100 Hz (about 36 kB of CSV). */
function effortCsv(seed: number, label = `effort-${seed}.csv`): string {
  return effortToCsv(generateEffort({ sampleRateHz: 100, label }, seed).recording);
}

const bytesOf = (text: string): Uint8Array => strToU8(text);
const zip = (entries: Zippable): Uint8Array => zipSync(entries);

const METADATA = { subjectCode: 'S-0042', visit: 'V3', bronchodilator: 'post' as const, demographics: { ageYears: 52, heightCm: 168, sex: 'female' as const } };
const CALIBRATION = [{ syringeVolumeL: 3, measuredVolumeL: 3.04, checkedAt: '2025-03-14T08:00:00+01:00' }];

function sessionDocument(): SessionDocument {
  return {
    format: SESSION_DOCUMENT_FORMAT,
    metadata: METADATA,
    efforts: [1, 2].map((seed) => recordingToSessionEffort(generateEffort({ sampleRateHz: 100, label: `blow-${seed}` }, seed).recording)),
    calibrationChecks: CALIBRATION,
  };
}

/** The input error an action throws; fails the test when it throws nothing or something else. */
function inputError(action: () => unknown): SpirometryInputError {
  try {
    action();
  } catch (error) {
    if (error instanceof SpirometryInputError) return error;
    throw error;
  }
  throw new Error('expected a SpirometryInputError; nothing was thrown');
}

/** Sets the compression method and declared expanded size of every entry, as a hostile archive might. */
function withHeaders(archive: Uint8Array, change: { method?: number; originalSize?: number }): Uint8Array {
  const out = archive.slice();
  const view = new DataView(out.buffer);
  for (let i = 0; i + 4 <= out.length; i++) {
    const signature = view.getUint32(i, true);
    // Local file header PK\x03\x04 and central directory header PK\x01\x02 (PKWARE APPNOTE 4.3.7 and 4.3.12).
    const isLocal = signature === 0x04034b50;
    if (!isLocal && signature !== 0x02014b50) continue;
    const offset = isLocal ? 0 : 2;
    if (change.method !== undefined) view.setUint16(i + 8 + offset, change.method, true);
    if (change.originalSize !== undefined) view.setUint32(i + 22 + offset, change.originalSize, true);
  }
  return out;
}

describe('detectUploadFormat', () => {
  const csv = bytesOf(effortCsv(1));
  it.each([
    ['a zip by its signature, whatever the name', 'upload.bin', zip({ 'a.csv': csv }), 'effort-zip'],
    ['an empty zip archive', 'empty.zip', zip({}), 'effort-zip'],
    ['session JSON by its content', 'upload.txt', bytesOf(JSON.stringify(sessionDocument())), 'tidemark-session-json'],
    ['a FHIR Bundle by resourceType', 'session.json', bytesOf(JSON.stringify(buildFhirBundle(sessionDocument()))), 'fhir-bundle'],
    ['an effort CSV by its header, after a byte-order mark', 'effort.txt', bytesOf('\uFEFF' + effortCsv(1)), 'effort-csv'],
    ['a flow CSV with spaces around the header cells', 'effort', bytesOf(' TIME_S , flow_l_s\n0,0\n'), 'effort-csv'],
    ['a .csv name when the content is not recognised', 'odd.csv', bytesOf('time,volume\n0,0\n'), 'effort-csv'],
    ['a .json name when the content is not an object', 'list.json', bytesOf('[1, 2]'), 'tidemark-session-json'],
    ['a .zip name when the signature is missing', 'broken.zip', bytesOf('not really a zip'), 'effort-zip'],
  ])('detects %s', (_case, name, bytes, format) => {
    expect(detectUploadFormat(name, bytes)).toBe(format);
  });

  it.each([
    ['a PNG image', 'scan.png', new Uint8Array([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a, 0, 0, 0, 13])],
    ['plain text', 'notes.txt', bytesOf('FEV1 was 3.2 L on the second blow\n')],
  ])('refuses %s, naming the file', (_case, name, bytes) => {
    const error = inputError(() => detectUploadFormat(name, bytes));
    expect(error.code).toBe('unknown-format');
    expect(error.message).toBe(
      `${name}: not a format Tidemark reads (expected an effort CSV, a .zip of effort CSVs, Tidemark session JSON or a FHIR R4 Bundle)`,
    );
  });

  it('refuses an empty file, naming it', () => {
    const error = inputError(() => detectUploadFormat('blank.csv', new Uint8Array(0)));
    expect(error.code).toBe('empty');
    expect(error.message).toBe('blank.csv: the file is empty');
  });
});

describe('decodeSessionFile', () => {
  it('reads one effort CSV as a session of one effort labelled with the file name', () => {
    const decoded = decodeSessionFile('e1.csv', bytesOf(effortCsv(1)), LIMITS);
    expect(decoded.format).toBe('effort-csv');
    expect(decoded.recordings.map((recording) => recording.label)).toEqual(['e1.csv']);
    expect(decoded.recordings[0].sampleRateHz).toBe(100);
    expect(decoded.metadata).toEqual({});
    expect(decoded.calibrationChecks).toEqual([]);
  });

  it('applies the minimum sampling rate it is given', () => {
    const error = inputError(() => decodeSessionFile('e1.csv', bytesOf(effortCsv(1)), { ...LIMITS, minSampleRateHz: 200 }));
    expect(error.code).toBe('sample-rate');
    expect(error.message).toMatch(/^e1\.csv: /);
  });

  it('reads a zip in entry-name order, skipping folders and macOS files, with session.json in full form', () => {
    const archive = zip({
      'b.csv': bytesOf(effortCsv(2)),
      'a.csv': bytesOf(effortCsv(1)),
      c: { 'C.csv': bytesOf(effortCsv(3)) },
      '__MACOSX/._a.csv': bytesOf('resource fork'),
      '.DS_Store': bytesOf('finder'),
      'session.json': bytesOf(JSON.stringify({ metadata: METADATA, calibrationChecks: CALIBRATION })),
    });
    const decoded = decodeSessionFile('session.zip', archive, LIMITS);
    expect(decoded.format).toBe('effort-zip');
    expect(decoded.recordings.map((recording) => recording.label)).toEqual(['a.csv', 'b.csv', 'c/C.csv']);
    expect(decoded.metadata).toEqual(METADATA);
    expect(decoded.calibrationChecks).toEqual(CALIBRATION);
  });

  it('reads bare metadata as a zip session.json, and a zip without one as carrying none', () => {
    const withBare = decodeSessionFile('s.zip', zip({ 'a.csv': bytesOf(effortCsv(1)), 'session.json': bytesOf(JSON.stringify(METADATA)) }), LIMITS);
    expect(withBare.metadata).toEqual(METADATA);
    expect(withBare.calibrationChecks).toEqual([]);
    const without = decodeSessionFile('s.zip', zip({ 'a.csv': bytesOf(effortCsv(1)) }), LIMITS);
    expect(without.metadata).toEqual({});
    expect(without.calibrationChecks).toEqual([]);
  });

  it('reads a Tidemark session JSON with its metadata and calibration checks', () => {
    const decoded = decodeSessionFile('session.json', bytesOf(JSON.stringify(sessionDocument())), LIMITS);
    expect(decoded.format).toBe('tidemark-session-json');
    expect(decoded.recordings.map((recording) => recording.label)).toEqual(['blow-1', 'blow-2']);
    expect(decoded.metadata).toEqual(METADATA);
    expect(decoded.calibrationChecks).toEqual(CALIBRATION);
  });

  it('reads a FHIR Bundle with the metadata it carries', () => {
    const decoded = decodeSessionFile('bundle.json', bytesOf(JSON.stringify(buildFhirBundle(sessionDocument()))), LIMITS);
    expect(decoded.format).toBe('fhir-bundle');
    expect(decoded.recordings).toHaveLength(2);
    expect(decoded.metadata.subjectCode).toBe('S-0042');
    expect(demographicsAtTest(decoded.metadata)).toEqual({ ageYears: 52, heightCm: 168, sex: 'female' });
  });

  const badCell = effortCsv(1).split('\n');
  badCell[5] = '0.040,abc';
  const csv = bytesOf(effortCsv(1));
  const zeros = new Uint8Array(2 * 1024 * 1024);
  it.each<[string, string, Uint8Array, Partial<DecodeLimits>, string, RegExp]>([
    ['an empty file', 'e.csv', new Uint8Array(0), {}, 'empty', /^e\.csv: the file is empty$/],
    ['a CSV with a wrong header', 'bad.csv', bytesOf('time,volume\n0,0\n0.01,0.1\n'), {}, 'csv-header', /^bad\.csv: unknown header "time,volume" on row 1/],
    ['an effort CSV header with an unknown signal', 'e.dat', bytesOf('time_s,pressure_kpa\n0,0\n'), {}, 'csv-header', /^e\.dat: unknown header/],
    ['text in a number', 'cell.csv', bytesOf(badCell.join('\n')), {}, 'csv-number', /^cell\.csv: row 6, column volume_l: "abc" is not a number/],
    ['a CSV that is not UTF-8', 'latin.csv', new Uint8Array([...strToU8('time_s,volume_l\n0,0\n'), 0xe9, 0x0a]), {}, 'encoding', /^latin\.csv: not UTF-8 text$/],
    ['invalid JSON', 'broken.json', bytesOf('{"format": '), {}, 'json', /^broken\.json: not valid JSON \(/],
    ['session JSON of an unknown format', 'odd.json', bytesOf('{"format":"other/9"}'), {}, 'session-format', /^odd\.json: format is "other\/9"/],
    ['a zip cut in half', 'cut.zip', zip({ 'a.csv': csv }).subarray(0, 2000), {}, 'zip', /^cut\.zip: not a readable zip archive \(truncated or damaged\)$/],
    ['a zip entry climbing out of the archive', 'evil.zip', zip({ 'a.csv': csv, '../evil.csv': csv }), {}, 'zip-path', /^evil\.zip: entry "\.\.\/evil\.csv" points outside/],
    ['a zip entry with an absolute path', 'abs.zip', zip({ '/abs.csv': csv }), {}, 'zip-path', /^abs\.zip: entry "\/abs\.csv" points outside/],
    ['a zip entry with a drive letter', 'drive.zip', zip({ 'C:/x.csv': csv }), {}, 'zip-path', /^drive\.zip: entry "C:\/x\.csv" points outside/],
    ['a zip entry with a backslash-absolute path', 'back.zip', zip({ '\\x.csv': csv }), {}, 'zip-path', /^back\.zip: entry "\\x\.csv" points outside/],
    ['a zip bomb (2 MB of zeros)', 'bomb.zip', zip({ 'zeros.csv': zeros }), {}, 'zip-bomb', /^bomb\.zip: entry "zeros\.csv" expands \d+ times its stored size$/],
    ['a zip expanding past the limit', 'big.zip', zip({ 'a.csv': csv, 'b.csv': csv }), { maxExpandedBytes: csv.length + 1000 }, 'file-too-large', /^big\.zip: expands to more than the \d+ bytes/],
    [
      'a stored zip entry understating its size',
      'liar.zip',
      withHeaders(zipSync({ 'a.csv': csv }, { level: 0 }), { originalSize: 10 }),
      { maxExpandedBytes: csv.length - 1 },
      'file-too-large',
      /^liar\.zip: expands to more than/,
    ],
    ['a zip with too many entries', 'many.zip', zip({ 'a.csv': csv, 'b.csv': csv, 'c.csv': csv, 'd.csv': csv }), { maxEntries: 3 }, 'zip-entries', /^many\.zip: holds more than the 3 entries/],
    ['a zip with a stray text file', 'stray.zip', zip({ 'a.csv': csv, 'notes.txt': bytesOf('hello') }), {}, 'zip-entry', /^stray\.zip: entry "notes\.txt" is neither/],
    ['a zip with two session.json', 'twice.zip', zip({ 'a.csv': csv, 'session.json': bytesOf('{}'), 'x/session.json': bytesOf('{}') }), {}, 'zip-entry', /^twice\.zip: entries "session\.json" and "x\/session\.json"/],
    ['a zip compressed with an unknown method', 'bzip.zip', withHeaders(zip({ 'a.csv': csv }), { method: 12 }), {}, 'zip', /^bzip\.zip: entry "a\.csv" uses a compression method/],
    ['a zip without CSVs', 'nocsv.zip', zip({ 'session.json': bytesOf(JSON.stringify(METADATA)) }), {}, 'zip-empty', /^nocsv\.zip: the archive holds no effort CSV$/],
    ['an empty zip archive', 'empty.zip', zip({}), {}, 'zip-empty', /^empty\.zip: the archive holds no effort CSV$/],
    ['a bad CSV inside a zip', 'inner.zip', zip({ 'data/bad.csv': bytesOf('time,volume\n0,0\n') }), {}, 'csv-header', /^data\/bad\.csv: unknown header/],
    [
      'a zip session.json with a wrong field',
      's.zip',
      zip({ 'a.csv': csv, 'session.json': bytesOf(JSON.stringify({ demographics: { ageYears: 'forty' } })) }),
      {},
      'session-json',
      /^s\.zip\/session\.json: demographics\.ageYears: /,
    ],
    [
      'a zip session.json with a wrong calibration check',
      's.zip',
      zip({ 'a.csv': csv, 'session.json': bytesOf(JSON.stringify({ metadata: {}, calibrationChecks: [{ syringeVolumeL: -3 }] })) }),
      {},
      'session-json',
      /^s\.zip\/session\.json: calibrationChecks\[0\]\.syringeVolumeL: /,
    ],
    ['a zip session.json that is not JSON', 's.zip', zip({ 'a.csv': csv, 'session.json': bytesOf('{demographics:') }), {}, 'json', /^s\.zip\/session\.json: not valid JSON/],
  ])('refuses %s', (_case, name, bytes, limits, code, message) => {
    const error = inputError(() => decodeSessionFile(name, bytes, { ...LIMITS, ...limits }));
    expect(error.code).toBe(code);
    expect(error.message).toMatch(message);
  });
});

describe('decodeEffortCsvFiles', () => {
  it('reads separate CSVs in the order given', () => {
    const decoded = decodeEffortCsvFiles(
      [
        { name: 's2.csv', bytes: bytesOf(effortCsv(2)) },
        { name: 's1.csv', bytes: bytesOf(effortCsv(1)) },
      ],
      LIMITS,
    );
    expect(decoded.format).toBe('effort-csv');
    expect(decoded.recordings.map((recording) => recording.label)).toEqual(['s2.csv', 's1.csv']);
    expect(decoded.metadata).toEqual({});
    expect(decoded.calibrationChecks).toEqual([]);
  });

  it('names the file that fails', () => {
    const error = inputError(() =>
      decodeEffortCsvFiles(
        [
          { name: 'good.csv', bytes: bytesOf(effortCsv(1)) },
          { name: 'bad.csv', bytes: bytesOf('time,volume\n') },
        ],
        LIMITS,
      ),
    );
    expect(error.code).toBe('csv-header');
    expect(error.message).toMatch(/^bad\.csv: /);
  });
});
