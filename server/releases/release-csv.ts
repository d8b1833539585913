/**
 * CSV as RFC 4180 describes it: CRLF after every record (the header too), fields holding a comma,
 * a double quote, CR or LF enclosed in double quotes with inner quotes doubled, UTF-8 without a
 * byte-order mark. Numbers are written the same way every time (fixed decimals where the column
 * declares them, else the ECMAScript shortest round-trip text of an already rounded value), so
 * that the same data always gives the same bytes. The reader takes such files back, for the files
 * of a release that are written from others (the transport file, the workbook).
 */
import fs from 'node:fs';
import { StringDecoder } from 'node:string_decoder';
import type { CellValue, ReleaseColumn } from './release-model.js';

const NEEDS_QUOTES = /[",\r\n]/;

/** One field, quoted when RFC 4180 asks for it. */
export function csvField(text: string): string {
  return NEEDS_QUOTES.test(text) ? `"${text.replace(/"/g, '""')}"` : text;
}

/** A cell as CSV text: empty for missing, numbers formatted by the column. */
export function formatCell(column: Pick<ReleaseColumn<unknown>, 'name' | 'type' | 'digits'>, value: CellValue): string {
  if (value === null || value === undefined) return '';
  if (typeof value === 'string') return value;
  if (!Number.isFinite(value)) return '';
  if (column.type === 'integer') {
    if (!Number.isInteger(value)) throw new RangeError(`Column ${column.name} holds integers; got ${value}`);
    return String(value);
  }
  const text = column.digits === undefined ? plainNumber(value) : value.toFixed(column.digits);
  // A value that rounds to zero from below keeps no minus sign.
  return /^-0(\.0*)?$/.test(text) ? text.slice(1) : text;
}

/** Shortest round-trip text without exponent notation. */
function plainNumber(value: number): string {
  const text = String(value);
  if (!text.includes('e')) return text;
  return value.toFixed(20).replace(/\.?0+$/, '');
}

/** The header line of a table. */
export function csvHeader(table: { readonly columns: readonly Pick<ReleaseColumn<never>, 'name'>[] }): string {
  return `${table.columns.map((column) => csvField(column.name)).join(',')}\r\n`;
}

/** One row of a table as a CSV line. */
export function csvLine<Row>(columns: readonly ReleaseColumn<Row>[], row: Row): string {
  return csvLineWriter(columns)(row);
}

const writers = new WeakMap<readonly ReleaseColumn<never>[], (row: never) => string>();

/**
 * A function writing rows of these columns as CSV lines, each column's formatting chosen once:
 * a release writes a million lines, so the choice is not made again for every field.
 */
export function csvLineWriter<Row>(columns: readonly ReleaseColumn<Row>[]): (row: Row) => string {
  const known = writers.get(columns as readonly ReleaseColumn<never>[]);
  if (known) return known as (row: Row) => string;
  const fields = columns.map((column) => {
    const value = column.value;
    if (column.type === 'text') {
      return (row: Row) => {
        const cell = value(row);
        return cell === null || cell === undefined ? '' : csvField(typeof cell === 'string' ? cell : String(cell));
      };
    }
    return (row: Row) => formatCell(column, value(row));
  });
  const write = (row: Row) => {
    let line = fields[0](row);
    for (let index = 1; index < fields.length; index++) line += `,${fields[index](row)}`;
    return `${line}\r\n`;
  };
  writers.set(columns as readonly ReleaseColumn<never>[], write as (row: never) => string);
  return write;
}

const QUOTE = 0x22;
const COMMA = 0x2c;
const CR = 0x0d;
const LF = 0x0a;
/** Text read from a file at a time. */
const READ_BLOCK_BYTES = 256 * 1024;

/**
 * The records of a CSV file as {@link csvLine} writes it (every record ended by CRLF), a block of
 * records at a time, each record its fields as text with the quoting undone: from the file at a
 * path, or from its bytes as they come. Lines without a quote, nearly all of them, are split as
 * they are; only quoted ones are scanned character by character. Throws naming the file when it
 * ends inside a record.
 */
export async function* readCsvRecords(file: string | { readonly name: string; readonly bytes: AsyncIterable<Buffer> }): AsyncGenerator<string[][]> {
  const name = typeof file === 'string' ? file : file.name;
  const bytes = typeof file === 'string' ? (fs.createReadStream(file, { highWaterMark: READ_BLOCK_BYTES }) as AsyncIterable<Buffer>) : file.bytes;
  // A character cut between two blocks is kept for the next.
  const decoder = new StringDecoder('utf8');
  let rest = '';
  for await (const chunk of bytes) {
    const text = rest + decoder.write(chunk);
    const { records, consumed } = parseCsvRecords(text);
    rest = text.slice(consumed);
    if (records.length > 0) yield records;
  }
  rest += decoder.end();
  if (rest.length > 0) throw new Error(`${name} ends inside a record (no CRLF after its last ${rest.length} characters)`);
}

/** The complete records at the start of `text`, and how many characters they take. */
export function parseCsvRecords(text: string): { records: string[][]; consumed: number } {
  const records: string[][] = [];
  let position = 0;
  let nextQuote = text.indexOf('"');
  while (position < text.length) {
    const end = text.indexOf('\r\n', position);
    if (end === -1) break;
    if (nextQuote !== -1 && nextQuote < position) nextQuote = text.indexOf('"', position);
    if (nextQuote === -1 || nextQuote > end) {
      records.push(text.slice(position, end).split(','));
      position = end + 2;
      continue;
    }
    const quoted = parseQuotedRecord(text, position);
    if (!quoted) break;
    records.push(quoted.fields);
    position = quoted.next;
  }
  return { records, consumed: position };
}

/** One record with quoted fields from `start`; undefined when the text ends before the record does. */
function parseQuotedRecord(text: string, start: number): { fields: string[]; next: number } | undefined {
  const fields: string[] = [];
  let index = start;
  for (;;) {
    if (text.charCodeAt(index) === QUOTE) {
      let value = '';
      let from = index + 1;
      for (;;) {
        const quote = text.indexOf('"', from);
        if (quote === -1 || quote + 1 >= text.length) return undefined;
        if (text.charCodeAt(quote + 1) === QUOTE) {
          value += text.slice(from, quote + 1);
          from = quote + 2;
          continue;
        }
        value += text.slice(from, quote);
        index = quote + 1;
        break;
      }
      fields.push(value);
    } else {
      let end = index;
      while (end < text.length && text.charCodeAt(end) !== COMMA && text.charCodeAt(end) !== CR) end++;
      if (end >= text.length) return undefined;
      fields.push(text.slice(index, end));
      index = end;
    }
    const separator = text.charCodeAt(index);
    if (separator === COMMA) {
      index++;
      continue;
    }
    if (index + 1 >= text.length) return undefined;
    if (separator === CR && text.charCodeAt(index + 1) === LF) return { fields, next: index + 2 };
    throw new Error(`A CSV record has "${text[index]}" after a field where a comma or CRLF belongs (at character ${index - start} of the record)`);
  }
}
