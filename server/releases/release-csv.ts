/**
 * CSV as RFC 4180 describes it: CRLF after every record (the header too), fields holding a comma,
 * a double quote, CR or LF enclosed in double quotes with inner quotes doubled, UTF-8 without a
 * byte-order mark. Numbers are written the same way every time (fixed decimals where the column
 * declares them, else the ECMAScript shortest round-trip text of an already rounded value), so
 * that the same data always gives the same bytes.
 */
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
