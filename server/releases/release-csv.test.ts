/**
 * CSV as RFC 4180 (Shafranovich 2005) section 2 describes it: CRLF line breaks, fields with a
 * comma, double quote or line break enclosed in double quotes, inner quotes doubled. Number
 * formatting is ours: fixed decimals per column, so that the same data gives the same bytes.
 */
import { describe, expect, it } from '@jest/globals';
import { csvField, csvHeader, csvLine, formatCell } from './release-csv.js';
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
