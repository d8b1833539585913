/**
 * @packageDocumentation
 * fast-check arbitraries of damaged session files for the upload fuzz suite. Each starts from a
 * valid file of the engine's seeded generator (effort CSV, zip of effort CSVs, Tidemark session
 * JSON, FHIR R4 Bundle) and applies one to three mutations: byte flips, truncation, inserted or
 * repeated bytes, deleted or retyped fields, extreme numbers, number-like text, unicode, repeated
 * headers, hostile zip entry names and archive bombs. Every file says in words what was done to
 * it, so a failure names the case without printing megabytes.
 */
import fc from 'fast-check';
import { strToU8, zipSync, type Zippable } from 'fflate';
import { buildFhirBundle } from '../../shared/spirometry/fhir-bundle.js';
import { SESSION_DOCUMENT_FORMAT, recordingToSessionEffort, type SessionDocument } from '../../shared/spirometry/session-document.js';
import { effortToCsv, generateSession } from '../../shared/spirometry/synthetic/curve-generator.js';
import {
  applyBytes,
  applyCsv,
  applyJson,
  byteMutation,
  csvMutation,
  encode,
  fraction,
  jsonMutation,
  type ByteMutation,
  type CsvMutation,
  type JsonMutation,
} from './content-mutations.js';

/** One file to send, with what was done to it. */
export interface MutatedFile {
  readonly format: 'effort-csv' | 'effort-zip' | 'session-json' | 'fhir-bundle';
  readonly name: string;
  readonly contentType: string;
  readonly bytes: Uint8Array;
  readonly description: string;
}

const ZIP_ENTRY_NAMES = [
  '../evil.csv', '../../etc/passwd.csv', '/absolute.csv', 'C:\\windows\\effort.csv', 'a/../../b.csv', 'a\\..\\..\\b.csv', 'folder/',
  '__MACOSX/._effort-1.csv', '.hidden.csv', 'ünïcødé-effort.csv', '💨.csv', `${'x'.repeat(300)}.csv`, 'readme.txt', 'session.json',
  'nested/deeper/effort-9.csv', 'EFFORT.CSV', 'effort.csv.exe', '',
];
const FILE_NAMES = [
  '../../etc/passwd', '..\\..\\boot.ini', 'effort.csv.exe', `${'x'.repeat(250)}.csv`, '💨.json', 'ünïcødé.zip', 'no-extension', '.csv',
  'a;b.csv', '\u202egpj.csv', 'CON', ' spaced name .csv', 'session.JSON', 'bundle.xml',
];
const CONTENT_TYPES = ['text/csv', 'application/json', 'application/zip', 'application/octet-stream', 'text/html', 'image/png', 'application/fhir+json'];

/**
 * Valid efforts of the seeded generator: every seed gives different curves, so no two files are
 * the same. Mostly at 100 Hz, the lowest rate ATS/ERS 2019 accepts (from memory), to keep runs fast.
 */
function efforts({ seed, rateHz }: Base, count: number) {
  return generateSession({ efforts: count, base: { fvcL: 2.6 + (seed % 20) * 0.05, pefLPerS: 6.5, sampleRateHz: rateHz } }, seed);
}

function sessionDocument(base: Base): SessionDocument {
  return { format: SESSION_DOCUMENT_FORMAT, metadata: {}, efforts: efforts(base, 3).map((effort) => recordingToSessionEffort(effort.recording)) };
}

interface Base {
  readonly seed: number;
  readonly rateHz: number;
}
const baseArbitrary: fc.Arbitrary<Base> = fc.record({
  seed: fc.integer({ min: 1, max: 2_000_000_000 }),
  rateHz: fc.constantFrom(100, 100, 100, 1000),
});
const fileName = (fallback: string) => fc.oneof({ weight: 4, arbitrary: fc.constant(fallback) }, { weight: 1, arbitrary: fc.constantFrom(...FILE_NAMES) });
const contentType = (fallback: string) => fc.oneof({ weight: 3, arbitrary: fc.constant(fallback) }, { weight: 1, arbitrary: fc.constantFrom(...CONTENT_TYPES) });
const maybeBytes = fc.option(byteMutation, { freq: 3 });

function finish(
  format: MutatedFile['format'],
  name: string,
  type: string,
  bytes: Uint8Array,
  steps: string[],
  bytesMutation: ByteMutation | null,
): MutatedFile {
  let out = bytes;
  if (bytesMutation) {
    const result = applyBytes(out, bytesMutation);
    out = result.bytes;
    steps.push(result.description);
  }
  return { format, name, contentType: type, bytes: out, description: `${format} "${name.slice(0, 60)}": ${steps.join('; ') || 'unchanged'}` };
}

/** Effort CSVs with text mutations, then maybe byte mutations. */
export const mutatedEffortCsv: fc.Arbitrary<MutatedFile> = fc
  .record({
    base: baseArbitrary,
    mutations: fc.array(csvMutation, { minLength: 1, maxLength: 3 }),
    bytes: maybeBytes,
    name: fileName('effort-1.csv'),
    type: contentType('text/csv'),
  })
  .map(({ base, mutations, bytes, name, type }) => {
    let result: { text: string; encoding?: 'utf16le'; description: string } = { text: effortToCsv(efforts(base, 1)[0].recording), description: '' };
    const steps: string[] = [];
    for (const mutation of mutations) {
      const next = applyCsv(result.text, mutation);
      result = { ...next, encoding: result.encoding ?? next.encoding };
      steps.push(result.description);
    }
    return finish('effort-csv', name, type, encode(result), steps, bytes);
  });

/** Session JSON documents with structural mutations, then maybe byte mutations. */
export const mutatedSessionJson: fc.Arbitrary<MutatedFile> = fc
  .record({
    base: baseArbitrary,
    mutations: fc.array(jsonMutation, { minLength: 1, maxLength: 3 }),
    bytes: maybeBytes,
    name: fileName('session.json'),
    type: contentType('application/json'),
  })
  .map(({ base, mutations, bytes, name, type }) => jsonFile('session-json', JSON.stringify(sessionDocument(base)), mutations, bytes, name, type));

/** FHIR R4 Bundles with structural mutations, then maybe byte mutations. */
export const mutatedFhirBundle: fc.Arbitrary<MutatedFile> = fc
  .record({
    base: baseArbitrary,
    mutations: fc.array(jsonMutation, { minLength: 1, maxLength: 3 }),
    bytes: maybeBytes,
    name: fileName('bundle.json'),
    type: contentType('application/fhir+json'),
  })
  .map(({ base, mutations, bytes, name, type }) => jsonFile('fhir-bundle', JSON.stringify(buildFhirBundle(sessionDocument(base))), mutations, bytes, name, type));

function jsonFile(
  format: 'session-json' | 'fhir-bundle',
  original: string,
  mutations: JsonMutation[],
  bytes: ByteMutation | null,
  name: string,
  type: string,
): MutatedFile {
  let text = original;
  let encoding: 'utf16le' | undefined;
  const steps: string[] = [];
  for (const mutation of mutations) {
    // Once the text is no longer JSON, structural mutations have nothing to work on.
    let parses = true;
    try {
      JSON.parse(text);
    } catch {
      parses = false;
    }
    if (!parses && mutation.kind !== 'text') continue;
    const result = applyJson(text, mutation);
    text = result.text;
    encoding ??= result.encoding;
    steps.push(result.description);
  }
  return finish(format, name, type, encode({ text, encoding }), steps, bytes);
}

/** Mutations of a zip archive's entries. */
type ZipMutation =
  | { kind: 'rename'; entry: number; name: string }
  | { kind: 'add'; name: string; text: string }
  | { kind: 'csv'; entry: number; mutation: CsvMutation }
  | { kind: 'session-json'; content: 'bare' | 'full' | 'broken' | 'wrong-type' | 'twice' }
  | { kind: 'many-entries'; count: number }
  | { kind: 'bomb'; megabytes: number };

const zipMutation: fc.Arbitrary<ZipMutation> = fc.oneof(
  fc.record({ kind: fc.constant('rename' as const), entry: fraction, name: fc.oneof(fc.constantFrom(...ZIP_ENTRY_NAMES), fc.string({ unit: 'grapheme', maxLength: 30 })) }),
  fc.record({ kind: fc.constant('add' as const), name: fc.constantFrom(...ZIP_ENTRY_NAMES), text: fc.constantFrom('time_s,volume_l\n0,0\n', '{}', '', 'MZ\u0090\u0000') }),
  fc.record({ kind: fc.constant('csv' as const), entry: fraction, mutation: csvMutation }),
  fc.record({ kind: fc.constant('session-json' as const), content: fc.constantFrom('bare' as const, 'full' as const, 'broken' as const, 'wrong-type' as const, 'twice' as const) }),
  fc.record({ kind: fc.constant('many-entries' as const), count: fc.constantFrom(20, 1001) }),
  fc.record({ kind: fc.constant('bomb' as const), megabytes: fc.constantFrom(2, 8) }),
);

/** Zips of effort CSVs (and sometimes session.json) with entry mutations, then maybe byte mutations. */
export const mutatedEffortZip: fc.Arbitrary<MutatedFile> = fc
  .record({
    base: baseArbitrary,
    mutations: fc.array(zipMutation, { minLength: 1, maxLength: 2 }),
    level: fc.constantFrom(0 as const, 1 as const, 6 as const, 9 as const),
    bytes: maybeBytes,
    name: fileName('efforts.zip'),
    type: contentType('application/zip'),
  })
  .map(({ base, mutations, level, bytes, name, type }) => {
    const entries: [string, Uint8Array][] = efforts(base, 3).map((effort, index) => [`effort-${index + 1}.csv`, strToU8(effortToCsv(effort.recording))]);
    const steps: string[] = [];
    let twiceSession = false;
    for (const mutation of mutations) {
      switch (mutation.kind) {
        case 'rename': {
          const index = Math.min(entries.length - 1, Math.floor(mutation.entry * entries.length));
          entries[index] = [mutation.name, entries[index][1]];
          steps.push(`entry ${index + 1} renamed ${JSON.stringify(mutation.name.slice(0, 40))}`);
          break;
        }
        case 'add':
          entries.push([mutation.name, strToU8(mutation.text)]);
          steps.push(`entry ${JSON.stringify(mutation.name.slice(0, 40))} added`);
          break;
        case 'csv': {
          const index = Math.min(entries.length - 1, Math.floor(mutation.entry * entries.length));
          const result = applyCsv(new TextDecoder().decode(entries[index][1]), mutation.mutation);
          entries[index] = [entries[index][0], encode(result)];
          steps.push(`entry ${index + 1}: ${result.description}`);
          break;
        }
        case 'session-json': {
          const content = {
            bare: '{"technicianCode":"TECH-07"}',
            full: '{"metadata":{},"calibrationChecks":[{"syringeVolumeL":3,"measuredVolumeL":1e308,"checkedAt":"2026-11-20T08:00:00+01:00"}]}',
            broken: '{"metadata": {',
            'wrong-type': '{"metadata":[],"calibrationChecks":"none"}',
            twice: '{}',
          }[mutation.content];
          entries.push(['session.json', strToU8(content)]);
          if (mutation.content === 'twice') twiceSession = true;
          steps.push(`session.json ${mutation.content}`);
          break;
        }
        case 'many-entries':
          for (let i = 0; i < mutation.count; i++) entries.push([`extra/empty-${i}.txt`, new Uint8Array(0)]);
          steps.push(`${mutation.count} more entries`);
          break;
        case 'bomb':
          entries.push(['zeros.csv', new Uint8Array(mutation.megabytes * 1024 * 1024)]);
          steps.push(`${mutation.megabytes} MB of zeros (a small archive bomb)`);
          break;
      }
    }
    const zippable: Zippable = {};
    for (const [entryName, content] of entries) zippable[entryName] = [content, { level }];
    let archive: Uint8Array = zipSync(zippable);
    if (twiceSession) archive = withDuplicateSessionEntry(archive);
    return finish('effort-zip', name, type, archive, steps, bytes);
  });

/** An object cannot hold two "session.json" keys: rename an entry of the same name length in the archive bytes instead. */
function withDuplicateSessionEntry(archive: Uint8Array): Uint8Array {
  const out = archive.slice();
  const text = new TextDecoder('latin1').decode(out);
  const needle = 'effort-1.csv';
  for (let index = text.indexOf(needle); index >= 0; index = text.indexOf(needle, index + 1)) {
    out.set(strToU8('session.json'), index);
  }
  return out;
}
