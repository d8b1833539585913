/**
 * CSV as RFC 4180 (Shafranovich 2005) section 2 describes it: CRLF line breaks, fields with a
 * comma, double quote or line break enclosed in double quotes, inner quotes doubled; and read
 * back the same way. Number formatting is ours: fixed decimals per column, so that the same data
 * gives the same bytes.
 */
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { describe, expect, it } from '@jest/globals';
import fc from 'fast-check';
import { csvField, csvHeader, csvLine, formatCell, parseCsvRecords, readCsvRecords } from './release-csv.js';
import type { ReleaseColumn } from './release-model.js';

describe('fields (RFC 4180 section 2, rules 5-7)', () => {
  it.each([
    ['plain', 'plain'],
    ['a,b', '"a,b"'],
    ['say "hi"', '"say ""hi"""'],
    ['two\r\nlines', '"two\r\nlines"'],
    ['line\nfeed', '"line\nfeed"'],
    [' spaces kept ', ' spaces kept '],
    ['', ''],
  ])('%j → %j', (text, expected) => {
    expect(csvField(text)).toBe(expected);
  });
});

describe('numbers, written the same way every time', () => {
  it.each([
    [{ type: 'decimal', digits: 3 }, 2.3456, '2.346'],
    [{ type: 'decimal', digits: 3 }, 2, '2.000'],
    [{ type: 'decimal', digits: 2 }, -0.001, '0.00'],
    [{ type: 'decimal', digits: 1 }, null, ''],
    [{ type: 'decimal', digits: 1 }, Number.NaN, ''],
    [{ type: 'decimal' }, 0.731, '0.731'],
    [{ type: 'decimal' }, 1e-7, '0.0000001'],
    [{ type: 'integer' }, 42, '42'],
    [{ type: 'text' }, 'x', 'x'],
  ] as const)('%j %p → %j', (column, value, expected) => {
    expect(formatCell({ name: 'c', ...column }, value)).toBe(expected);
  });

  it('refuses a fraction in an integer column', () => {
    expect(() => formatCell({ name: 'count', type: 'integer' }, 1.5)).toThrow(/count holds integers/);
  });
});

describe('lines', () => {
  type Row = { name: string; value: number | null };
  const columns: ReleaseColumn<Row>[] = [
    { name: 'name', label: 'name', type: 'text', description: '', value: (row) => row.name },
    { name: 'value_l', label: 'value_l', type: 'decimal', digits: 3, description: '', value: (row) => row.value },
  ];

  it('ends every record, the header too, with CRLF', () => {
    expect(csvHeader({ columns })).toBe('name,value_l\r\n');
    expect(csvLine(columns, { name: 'Visit 2, week 4', value: 1.2 })).toBe('"Visit 2, week 4",1.200\r\n');
    expect(csvLine(columns, { name: 'x', value: null })).toBe('x,\r\n');
  });
});

describe('reading back what csvLine wrote (RFC 4180 section 2)', () => {
  type Row = { text: string; number: number | null };
  const columns: ReleaseColumn<Row>[] = [
    { name: 'text', label: 'text', type: 'text', description: '', value: (row) => row.text },
    { name: 'number', label: 'number', type: 'decimal', digits: 2, description: '', value: (row) => row.number },
  ];

  it('undoes the quoting: commas, doubled quotes and line breaks inside fields, and empty fields', () => {
    const rows: Row[] = [
      { text: 'Visit 2, week 4', number: 1.5 },
      { text: 'say "hi"', number: null },
      { text: 'two\r\nlines', number: -0.001 },
      { text: '', number: 0 },
    ];
    const text = csvHeader({ columns }) + rows.map((row) => csvLine(columns, row)).join('');
    expect(parseCsvRecords(text)).toEqual({
      records: [
        ['text', 'number'],
        ['Visit 2, week 4', '1.50'],
        ['say "hi"', ''],
        ['two\r\nlines', '0.00'],
        ['', '0.00'],
      ],
      consumed: text.length,
    });
  });

  it('takes only whole records: text cut anywhere leaves the cut record for the next block', () => {
    fc.assert(
      fc.property(
        fc.array(fc.array(fc.string({ unit: 'grapheme', maxLength: 12 }), { minLength: 1, maxLength: 5 }), { minLength: 1, maxLength: 8 }),
        fc.nat(),
        (records, cutAt) => {
          const text = records.map((fields) => `${fields.map(csvField).join(',')}\r\n`).join('');
          const cut = cutAt % (text.length + 1);
          const first = parseCsvRecords(text.slice(0, cut));
          const second = parseCsvRecords(text.slice(first.consumed));
          expect(second.consumed).toBe(text.length - first.consumed);
          expect([...first.records, ...second.records]).toEqual(records);
        },
      ),
    );
  });

  it('reads a file a block at a time, and names the file when it ends inside a record', async () => {
    const folder = fs.mkdtempSync(path.join(os.tmpdir(), 'tidemark-csv-'));
    try {
      const file = path.join(folder, 'rows.csv');
      const line = csvLine(columns, { text: 'a "long", quoted\r\ntext '.repeat(20), number: 2 });
      fs.writeFileSync(file, line.repeat(5_000));
      const blocks: string[][][] = [];
      for await (const records of readCsvRecords(file)) blocks.push(records);
      expect(blocks.length).toBeGreaterThan(1);
      expect(blocks.flat()).toEqual(Array.from({ length: 5_000 }, () => ['a "long", quoted\r\ntext '.repeat(20), '2.00']));

      fs.writeFileSync(file, `${line}"unfinished,`);
      await expect(async () => {
        for await (const _records of readCsvRecords(file)) void _records;
      }).rejects.toThrow(`${file} ends inside a record`);
    } finally {
      fs.rmSync(folder, { recursive: true, force: true });
    }
  });

  it('refuses a record with text after a closing quote', () => {
    expect(() => parseCsvRecords('"a"b,c\r\n')).toThrow(/"b" after a field where a comma or CRLF belongs/);
  });
});
