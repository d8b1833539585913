/**
 * The transport writer against SAS technical note TS-140 (record layout of a SAS XPORT version 5
 * file), and read back with an independent reader, the `xport-js` package: every variable's
 * metadata and every value must come back as written.
 */
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { afterAll, describe, expect, it } from '@jest/globals';
import xportJs from 'xport-js';
import {
  XptObservationEncoder,
  toTransportText,
  writeXpt,
  xptDateTime,
  xptHeader,
  type XptDataset,
  type XptValue,
} from './xpt-writer.js';

const folder = fs.mkdtempSync(path.join(os.tmpdir(), 'tidemark-xpt-'));
afterAll(() => fs.rmSync(folder, { recursive: true, force: true }));

const DATASET: XptDataset = {
  name: 'RE',
  label: 'Respiratory System Findings',
  createdAt: new Date('2026-11-20T08:30:05Z'),
  variables: [
    { name: 'STUDYID', label: 'Study Identifier', type: 'char', length: 12 },
    { name: 'USUBJID', label: 'Unique Subject Identifier', type: 'char', length: 20 },
    { name: 'RESEQ', label: 'Sequence Number', type: 'num', length: 8 },
    { name: 'RETESTCD', label: 'Short Name of Respiratory Test', type: 'char', length: 8 },
    { name: 'RETEST', label: 'Name of Respiratory Test', type: 'char', length: 40 },
    { name: 'RESTRESN', label: 'Numeric Result/Finding in Standard Units', type: 'num', length: 8 },
    { name: 'REREASND', label: 'Reason Not Done', type: 'char', length: 1 },
  ],
};

const ROWS: XptValue[][] = [
  ['HLX-201', 'HLX-201-101-0001', 1, 'FEV1', 'Forced Expiratory Volume in 1 Second', 2.345, ''],
  ['HLX-201', 'HLX-201-101-0001', 2, 'FVC', 'Forced Vital Capacity', 3.21, null],
  ['HLX-201', 'HLX-201-101-0001', 3, 'FEV1FVC', 'FEV1/FVC', 0.7305, 'X'],
  ['HLX-201', 'HLX-201-101-0002', 4, 'PEF', 'Peak Expiratory Flow', null, ''],
  ['HLX-201', 'HLX-201-101-0002', 5, 'BEV', 'Back Extrapolated Volume', -0.0125, ''],
  ['HLX-201', 'HLX-201-101-0002', 1e6, 'FET', 'Forced Expiratory Time 1234567890 abcdef', 1e-12, ''],
  ['HLX-201', 'HLX-201-101-0003', 0, 'X', 'x', 123456789.125, ''],
];

/** Reads a transport file with xport-js: its variables and every observation as arrays. */
async function readBack(file: string) {
  const Library = xportJs.default;
  const library = new Library(file);
  const metadata = (await library.getMetadata()) as { name: string; label: string; length: number; type: string; dataset: string }[];
  const rows: unknown[][] = [];
  for await (const row of library.read({ rowFormat: 'array', skipHeader: true })) rows.push(row as unknown[]);
  return { metadata, rows, header: library.getHeader() };
}

function writeFile(name: string, bytes: Buffer): string {
  const file = path.join(folder, name);
  fs.writeFileSync(file, bytes);
  return file;
}

describe('a transport file read back with xport-js', () => {
  it('gives back every variable with its name, label, type and length', async () => {
    const { metadata } = await readBack(writeFile('meta.xpt', writeXpt(DATASET, ROWS)));
    expect(metadata).toEqual(
      DATASET.variables.map((variable) => ({
        dataset: 'RE',
        name: variable.name,
        label: variable.label,
        length: variable.length,
        type: variable.type === 'num' ? 'Num' : 'Char',
      })),
    );
  });

  it('gives back every value: numbers exactly, missing numbers as null, texts without their blank padding', async () => {
    const { rows } = await readBack(writeFile('values.xpt', writeXpt(DATASET, ROWS)));
    // xport-js trims texts, so a written empty text and a missing text both read as "".
    const expected = ROWS.map((row) => row.map((value, index) => (DATASET.variables[index].type === 'char' ? (value ?? '') : value)));
    expect(rows).toEqual(expected);
  });

  it('reads 3,000 observations written through small chunks exactly as written', async () => {
    const many: XptValue[][] = Array.from({ length: 3_000 }, (_unused, i) => [
      'S',
      `SUBJ-${String(i).padStart(5, '0')}`,
      i + 1,
      i % 3 === 0 ? 'FEV1' : 'FVC',
      `Test ${i}`,
      i % 7 === 0 ? null : Math.round((i * 0.001 + 1.5) * 1000) / 1000,
      '',
    ]);
    const encoder = new XptObservationEncoder(DATASET.variables, 1000);
    const parts = [xptHeader(DATASET)];
    for (const row of many) {
      const chunk = encoder.add(row);
      if (chunk) parts.push(chunk);
    }
    parts.push(encoder.finish());
    const streamed = Buffer.concat(parts);
    expect(streamed.equals(writeXpt(DATASET, many))).toBe(true);
    const { rows } = await readBack(writeFile('many.xpt', streamed));
    expect(rows).toHaveLength(many.length);
    expect(rows).toEqual(many);
  });

  it('writes the same bytes when each written chunk is handed back to be filled again', () => {
    const many: XptValue[][] = Array.from({ length: 500 }, (_unused, i) => ['S', `SUBJ-${i}`, i, i % 2 ? 'FEV1' : 'FVC', i % 5 ? 'short' : '', i / 7, 'x']);
    const encoder = new XptObservationEncoder(DATASET.variables, 1000);
    const written: Buffer[] = [];
    const seen = new Set<Buffer>();
    for (const row of many) {
      const chunk = encoder.add(row);
      if (!chunk) continue;
      seen.add(chunk);
      written.push(Buffer.from(chunk));
      encoder.recycle(chunk);
    }
    written.push(encoder.finish());
    expect(Buffer.concat([xptHeader(DATASET), ...written]).equals(writeXpt(DATASET, many))).toBe(true);
    // Far fewer buffers than chunks: the recycled ones were filled again.
    expect(written.length).toBeGreaterThan(20);
    expect(seen.size).toBeLessThanOrEqual(3);
  });

  it('gives back the header fields: SAS symbols, library and date', async () => {
    const { header } = await readBack(writeFile('header.xpt', writeXpt(DATASET, ROWS)));
    expect(header).toMatchObject({ sasSymbol: ['SAS', 'SAS'], sasLib: 'SASLIB', sasCreate: '20NOV26:08:30:05', sasModified: '20NOV26:08:30:05' });
  });
});

describe('the record layout of TS-140', () => {
  const bytes = writeXpt(DATASET, ROWS);
  const record = (n: number) => bytes.subarray(n * 80, (n + 1) * 80).toString('latin1');

  it('is made of 80-byte records: 3 library, 4 member, NAMESTRs padded to a record, the observation header, the data', () => {
    const namestrRecords = Math.ceil((DATASET.variables.length * 140) / 80);
    const observationBytes = DATASET.variables.reduce((sum, variable) => sum + variable.length, 0);
    const dataRecords = Math.ceil((ROWS.length * observationBytes) / 80);
    expect(bytes.length).toBe((3 + 4 + 1 + namestrRecords + 1 + dataRecords) * 80);
    expect(record(0)).toBe('HEADER RECORD*******LIBRARY HEADER RECORD!!!!!!!000000000000000000000000000000  ');
    expect(record(1).startsWith('SAS     SAS     SASLIB  ')).toBe(true);
    expect(record(3)).toBe('HEADER RECORD*******MEMBER  HEADER RECORD!!!!!!!000000000000000001600000000140  ');
    expect(record(4)).toBe('HEADER RECORD*******DSCRPTR HEADER RECORD!!!!!!!000000000000000000000000000000  ');
    expect(record(5).slice(0, 24)).toBe('SAS     RE      SASDATA ');
    expect(record(6).slice(32, 72)).toBe('Respiratory System Findings'.padEnd(40));
    expect(record(7)).toBe('HEADER RECORD*******NAMESTR HEADER RECORD!!!!!!!000000000700000000000000000000  ');
    expect(record(8 + namestrRecords)).toBe('HEADER RECORD*******OBS     HEADER RECORD!!!!!!!000000000000000000000000000000  ');
  });

  it('writes each NAMESTR as 140 big-endian bytes: type, length, number, name, label, position', () => {
    const start = 8 * 80;
    const third = bytes.subarray(start + 2 * 140, start + 3 * 140);
    expect(third.readInt16BE(0)).toBe(1); // numeric
    expect(third.readInt16BE(4)).toBe(8);
    expect(third.readInt16BE(6)).toBe(3);
    expect(third.subarray(8, 16).toString('latin1')).toBe('RESEQ   ');
    expect(third.subarray(16, 56).toString('latin1').trimEnd()).toBe('Sequence Number');
    expect(third.readInt32BE(84)).toBe(12 + 20);
    const fifth = bytes.subarray(start + 4 * 140, start + 5 * 140);
    expect(fifth.readInt16BE(0)).toBe(2); // character
    expect(fifth.readInt16BE(4)).toBe(40);
  });

  it('pads character values and the last record with blanks, and writes a missing number as "." and seven zeros', () => {
    const short = writeXpt(
      { ...DATASET, variables: [{ name: 'A', label: 'A', type: 'char', length: 3 }, { name: 'N', label: 'N', type: 'num', length: 8 }] },
      [['x', null]],
    );
    const data = short.subarray(short.length - 80);
    expect(data.subarray(0, 3).toString('latin1')).toBe('x  ');
    expect([...data.subarray(3, 11)]).toEqual([0x2e, 0, 0, 0, 0, 0, 0, 0]);
    expect(data.subarray(11).every((byte) => byte === 0x20)).toBe(true);
  });

  it('writes the date-time as ddMMMyy:hh:mm:ss in UTC', () => {
    expect(xptDateTime(new Date('2009-01-02T03:04:05Z'))).toBe('02JAN09:03:04:05');
  });
});

describe('what a version 5 file cannot hold is refused with the reason', () => {
  it.each([
    ['a data set name over 8 characters', { ...DATASET, name: 'RESPIRATORY' }, /name must be 1-8/],
    ['a label over 40 characters', { ...DATASET, label: 'x'.repeat(41) }, /label must be at most 40/],
    ['a variable name over 8 characters', { ...DATASET, variables: [{ name: 'LONGNAME9', label: '', type: 'char', length: 1 }] }, /LONGNAME9.*name/],
    ['a text variable over 200 bytes', { ...DATASET, variables: [{ name: 'A', label: '', type: 'char', length: 201 }] }, /1-200 bytes/],
    ['a number not of 8 bytes', { ...DATASET, variables: [{ name: 'A', label: '', type: 'num', length: 4 }] }, /numbers take 8 bytes/],
    [
      'a variable named twice',
      { ...DATASET, variables: [{ name: 'A', label: '', type: 'num', length: 8 }, { name: 'A', label: '', type: 'num', length: 8 }] },
      /twice/,
    ],
  ] as [string, XptDataset, RegExp][])('%s', (_case, dataset, message) => {
    expect(() => xptHeader(dataset)).toThrow(message);
  });

  it('refuses a text longer than its variable and a text in a numeric variable', () => {
    expect(() => writeXpt(DATASET, [['x'.repeat(13), '', 1, '', '', 1, '']])).toThrow(/STUDYID holds 12 characters/);
    expect(() => writeXpt(DATASET, [['', '', 'one', '', '', 1, '']])).toThrow(/RESEQ is numeric/);
  });

  it('writes texts as ASCII: accents dropped, anything else as "?"', () => {
    expect(toTransportText('Clínica Alcorán – Visite 2')).toBe('Clinica Alcoran ? Visite 2');
    expect(toTransportText('plain')).toBe('plain');
  });
});
