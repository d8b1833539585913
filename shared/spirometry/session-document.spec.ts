import { describe, expect, it } from '@jest/globals';
import { captureInputError as errorOf } from './testing/capture-input-error.js';
import {
  type SessionDocument,
  parseSessionDocument,
  sessionDocumentJsonSchema,
  sessionDocumentToRecordings,
} from './session-document.js';
import { generateSession } from './synthetic/curve-generator.js';

function sessionOf(efforts = 2): SessionDocument {
  const generated = generateSession({ efforts, base: { sampleRateHz: 100, signal: 'flow' } }, 4);
  return {
    format: 'tidemark-session/1',
    metadata: {
      subjectCode: 'S-0042',
      visit: 'V3',
      timepoint: 'pre-dose',
      bronchodilator: 'pre',
      testedAt: '2025-03-14T09:30:00+01:00',
      timeZone: 'Europe/Lisbon',
      device: { manufacturer: 'Fictional Instruments', model: 'Breeze 2', serialNumber: 'SN-17' },
      technicianCode: 'T-07',
      demographics: { ageYears: 61, heightCm: 172, weightKg: 80, sex: 'male', ethnicity: 'caucasian' },
    },
    efforts: generated.map((g) => ({
      label: g.recording.label,
      signal: g.recording.signal,
      sampleRateHz: g.recording.sampleRateHz,
      values: Array.from(g.recording.values),
    })),
    calibrationChecks: [{ syringeVolumeL: 3, measuredVolumeL: 3.04, checkedAt: '2025-03-14T08:05:00+01:00' }],
  };
}


describe('Tidemark session JSON (tidemark-session/1)', () => {
  it('survives a JSON round trip unchanged', () => {
    const doc = sessionOf();
    const back = parseSessionDocument(JSON.parse(JSON.stringify(doc)));
    expect(back).toEqual(doc);
  });

  it('turns efforts into recordings in document order', () => {
    const doc = sessionOf(3);
    const recordings = sessionDocumentToRecordings(doc);
    expect(recordings.map((r) => r.label)).toEqual(['effort-1.csv', 'effort-2.csv', 'effort-3.csv']);
    expect(recordings[1].values.length).toBe(doc.efforts[1].values.length);
    expect(recordings[1].startTimeS).toBe(0);
    expect(recordings[1].signal).toBe('flow');
  });

  it('accepts samples of ±100 and start times of ±1e10 s, the limits of sample-limits.ts (common practice)', () => {
    const doc = parseSessionDocument({
      format: 'tidemark-session/1',
      metadata: {},
      efforts: [{ label: 'e1', signal: 'flow', sampleRateHz: 100, startTimeS: -1e10, values: [-100, 100] }],
    });
    expect(Array.from(sessionDocumentToRecordings(doc)[0].values)).toEqual([-100, 100]);
  });

  it('accepts the minimum: format, empty metadata, one effort', () => {
    const doc = parseSessionDocument({ format: 'tidemark-session/1', metadata: {}, efforts: [{ label: 'e1', signal: 'volume', sampleRateHz: 100, values: [0, 0.1] }] });
    expect(doc.efforts).toHaveLength(1);
  });

  const bad: [string, (doc: Record<string, unknown>) => unknown, string, RegExp][] = [
    ['no format', ({ format: _f, ...rest }) => rest, 'session-format', /format is missing; expected "tidemark-session\/1"/],
    ['another format', (d) => ({ ...d, format: 'tidemark-session/9' }), 'session-format', /format is "tidemark-session\/9"/],
    ['not an object', () => 'hello', 'session-format', /format is missing/],
    [
      'text among the samples',
      (d) => ({ ...d, efforts: [{ label: 'e1', signal: 'flow', sampleRateHz: 100, values: [0, 'x', 1] }] }),
      'session-json',
      /efforts\[0\]\.values\[1\]: /,
    ],
    [
      'a single sample',
      (d) => ({ ...d, efforts: [{ label: 'e1', signal: 'flow', sampleRateHz: 100, values: [0] }] }),
      'session-json',
      /efforts\[0\]\.values: Too small/,
    ],
    [
      'an infinite sample (from a program, not JSON text)',
      (d) => ({ ...d, efforts: [{ label: 'e1', signal: 'flow', sampleRateHz: 100, values: [0, 1, Infinity] }] }),
      'session-json',
      /efforts\[0\]\.values\[2\]: /,
    ],
    [
      'samples that are not a list',
      (d) => ({ ...d, efforts: [{ label: 'e1', signal: 'flow', sampleRateHz: 100, values: '0,1,2' }] }),
      'session-json',
      /efforts\[0\]\.values: /,
    ],
    ['unknown signal', (d) => ({ ...d, efforts: [{ label: 'e1', signal: 'pressure', sampleRateHz: 100, values: [0, 1] }] }), 'session-json', /efforts\[0\]\.signal: /],
    ['bronchodilator misspelt', (d) => ({ ...d, metadata: { bronchodilator: 'before' } }), 'session-json', /metadata\.bronchodilator: /],
    ['date without offset', (d) => ({ ...d, metadata: { testedAt: '2025-03-14T09:30:00' } }), 'session-json', /metadata\.testedAt: /],
    ['no efforts', (d) => ({ ...d, efforts: [] }), 'session-json', /efforts: /],
    ['unknown key (a name would be personal data)', (d) => ({ ...d, metadata: { subjectName: 'A' } }), 'session-json', /metadata: .*subjectName/],

    // Limits of sample-limits.ts (common practice); a sample near the top of the double range once hung the engine.
    [
      'a sample near the top of the double range',
      (d) => ({ ...d, efforts: [{ label: 'e1', signal: 'volume', sampleRateHz: 100, values: [0, 1.7e308, 1] }] }),
      'session-json',
      /efforts\[0\]\.values\[1\]: a sample lies within ±100 \(L or L\/s\)/,
    ],
    [
      'a start time beyond 1e10 s',
      (d) => ({ ...d, efforts: [{ label: 'e1', signal: 'volume', sampleRateHz: 100, startTimeS: 1e15, values: [0, 1] }] }),
      'session-json',
      /efforts\[0\]\.startTimeS: a start time lies within/,
    ],
  ];

  it.each(bad)('rejects %s with the path of the problem', (_name, change, code, message) => {
    const json = change(JSON.parse(JSON.stringify(sessionOf(1))) as Record<string, unknown>);
    const error = errorOf(() => parseSessionDocument(json, 'upload.json'));
    expect(error.code).toBe(code);
    expect(error.message).toMatch(/^upload\.json: /);
    expect(error.message).toMatch(message);
  });

  it('publishes a JSON Schema that names the format and the effort fields', () => {
    const schema = sessionDocumentJsonSchema() as {
      properties: { format: { const?: string }; efforts: { items: { required: string[] } } };
      required: string[];
    };
    expect(schema.properties.format.const).toBe('tidemark-session/1');
    expect(schema.required).toEqual(expect.arrayContaining(['format', 'metadata', 'efforts']));
    expect(schema.properties.efforts.items.required).toEqual(expect.arrayContaining(['label', 'signal', 'sampleRateHz', 'values']));
  });
});
