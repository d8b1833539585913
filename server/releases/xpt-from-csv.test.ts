/**
 * The transport file written from a CSV file must be byte for byte the one written from the
 * values the CSV file was written from (SAS technical note TS-140 layout, checked against xport-js
 * in xpt-writer.test.ts): texts as ASCII, numbers exactly. Numbers are read as Number() reads them
 * (the fast path of Clinger 1990, "How to read floating point numbers accurately").
 */
import { describe, expect, it } from '@jest/globals';
import fc from 'fast-check';
import { csvHeader, csvLine } from './release-csv.js';
import type { CellValue, ReleaseColumn } from './release-model.js';
import { readCsvNumber, XptCsvTranscoder } from './xpt-from-csv.js';
import { toTransportText, writeXpt, xptHeader, XptObservationEncoder, type XptDataset, type XptVariable } from './xpt-writer.js';

type Row = CellValue[];

const COLUMNS: ReleaseColumn<Row>[] = [
  { name: 'STUDYID', label: 'Study Identifier', type: 'text', description: '', value: (row) => row[0] },
  { name: 'RESEQ', label: 'Sequence Number', type: 'integer', description: '', value: (row) => row[1] },
  { name: 'VISIT', label: 'Visit Name', type: 'text', description: '', value: (row) => row[2] },
  { name: 'RESTRESN', label: 'Numeric Result', type: 'decimal', description: '', value: (row) => row[3] },
  { name: 'REREASND', label: 'Reason Not Done', type: 'text', description: '', value: (row) => row[4] },
];

/** The variables of COLUMNS, each text as long as its longest value. */
function variablesFor(rows: readonly Row[]): XptVariable[] {
  return COLUMNS.map((column, index) => {
    if (column.type !== 'text') return { name: column.name, label: column.label, type: 'num', length: 8 };
    const texts = rows.map((row) => (row[index] as string | null) ?? '');
    const length = Math.max(1, ...texts.map((text) => Math.max(text.length, toTransportText(text).length)));
    return { name: column.name, label: column.label, type: 'char', length };
  });
}

/** The CSV file of the rows, in pieces cut at the given places. */
function csvPieces(rows: readonly Row[], cuts: readonly number[]): Buffer[] {
  const bytes = Buffer.from(csvHeader({ columns: COLUMNS }) + rows.map((row) => csvLine(COLUMNS, row)).join(''), 'utf8');
  const at = [...new Set(cuts.map((cut) => cut % (bytes.length + 1)))].sort((a, b) => a - b);
  return [0, ...at].map((start, index) => bytes.subarray(start, index < at.length ? at[index] : bytes.length));
}

function transcode(variables: readonly XptVariable[], pieces: readonly Buffer[], chunkBytes?: number): Buffer {
  const transcoder = new XptCsvTranscoder(variables, chunkBytes);
  const parts = [xptHeader(dataset(variables))];
  for (const piece of pieces) parts.push(...transcoder.push(piece));
  transcoder.end();
  parts.push(transcoder.finish());
  return Buffer.concat(parts);
}

const dataset = (variables: readonly XptVariable[]): XptDataset => ({ name: 'RE', label: 'Respiratory', createdAt: new Date('2026-11-20T08:30:05Z'), variables });

/** A number as the RE domain holds it: an integer, or a decimal rounded to at most 3 places, or missing. */
const reNumber = fc.oneof(
  fc.constant(null),
  fc.integer({ min: -1e6, max: 1e9 }),
  fc.tuple(fc.double({ min: -1e6, max: 1e6, noNaN: true }), fc.integer({ min: 0, max: 3 })).map(([value, digits]) => {
    const rounded = Number(value.toFixed(digits));
    return rounded === 0 ? 0 : rounded;
  }),
);
const text = fc.oneof(
  fc.constant(null),
  fc.string({ maxLength: 20 }),
  fc.string({ unit: 'grapheme', maxLength: 12 }),
  fc.constantFrom('Visite 2, Zürich', 'say "hi"', 'two\r\nlines', 'Clínica – Woche 4', ''),
);
const row = fc.tuple(text, fc.integer({ min: 1, max: 1e6 }), text, reNumber, text).map((values) => [...values] as Row);

describe('a transport file from a CSV file', () => {
  it('is the transport file of the values themselves, however the CSV bytes arrive', () => {
    fc.assert(
      fc.property(fc.array(row, { maxLength: 30 }), fc.array(fc.nat(), { maxLength: 6 }), fc.integer({ min: 1, max: 400 }), (rows, cuts, chunkBytes) => {
        const variables = variablesFor(rows);
        const expected = writeXpt(dataset(variables), rows);
        expect(transcode(variables, csvPieces(rows, cuts), chunkBytes).equals(expected)).toBe(true);
      }),
    );
  });

  it('counts the observations it wrote', () => {
    const rows: Row[] = [
      ['HLX-201', 1, 'Visit 1', 2.345, null],
      ['HLX-201', 2, 'Visit 1', null, 'NOT COMPUTABLE'],
    ];
    const transcoder = new XptCsvTranscoder(variablesFor(rows));
    transcoder.push(csvPieces(rows, [])[0]);
    expect(transcoder.count).toBe(2);
    const encoder = new XptObservationEncoder(variablesFor(rows));
    for (const values of rows) encoder.add(values);
    expect(transcoder.finish().equals(encoder.finish())).toBe(true);
  });

  it('refuses a CSV file whose header is not the variables, a record of the wrong width and a file cut inside a record', () => {
    const variables = variablesFor([['A', 1, 'B', 1, 'C']]);
    expect(() => new XptCsvTranscoder(variables).push(Buffer.from('STUDYID,RESEQ\r\n'))).toThrow(
      'The CSV header is "STUDYID,RESEQ", not the variables STUDYID,RESEQ,VISIT,RESTRESN,REREASND',
    );
    const header = csvHeader({ columns: COLUMNS });
    expect(() => new XptCsvTranscoder(variables).push(Buffer.from(`${header}A,1,B\r\n`))).toThrow('An observation needs 5 values; a CSV record has 3');
    expect(() => new XptCsvTranscoder(variables).push(Buffer.from(`${header}A,1,B,1,C,D\r\n`))).toThrow('An observation needs 5 values; a CSV record has 6');
    const cut = new XptCsvTranscoder(variables);
    cut.push(Buffer.from(`${header}A,1,B`));
    expect(() => cut.end()).toThrow('The CSV file ends inside a record (no CRLF after its last 5 bytes)');
  });

  it('refuses a text longer than its variable, naming it', () => {
    const variables = variablesFor([['A', 1, 'B', 1, 'C']]);
    expect(() => new XptCsvTranscoder(variables).push(Buffer.from(`${csvHeader({ columns: COLUMNS })}AB,1,B,1,C\r\n`))).toThrow(
      'STUDYID holds 1 characters; "AB" has 2',
    );
  });
});

describe('numbers read from CSV bytes', () => {
  const read = (text: string) => readCsvNumber(Buffer.from(text, 'latin1'), 0, text.length);

  it('are what Number() makes of the text, to the last bit and the sign of zero', () => {
    fc.assert(
      fc.property(fc.boolean(), fc.stringMatching(/^\d{1,22}$/), fc.option(fc.stringMatching(/^\d{0,22}$/)), (negative, whole, fraction) => {
        const textOf = `${negative ? '-' : ''}${whole}${fraction === null ? '' : `.${fraction}`}`;
        expect(Object.is(read(textOf), Number(textOf))).toBe(true);
      }),
    );
    fc.assert(
      fc.property(fc.double({ noNaN: true }), (value) => {
        expect(Object.is(read(String(value)), Number(String(value)))).toBe(true);
      }),
    );
  });

  it.each([
    ['', null],
    ['0.731', 0.731],
    ['-0', -0],
    ['1e-7', 1e-7],
    ['1.', 1],
    ['.5', 0.5],
    ['12345678901234567890', 12345678901234567000],
    ['x', Number.NaN],
  ])('%j → %p', (textOf, expected) => {
    expect(Object.is(read(textOf), expected)).toBe(true);
  });
});
