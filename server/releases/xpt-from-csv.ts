/**
 * SAS transport observations straight from the bytes of a CSV file written by release-csv (RFC
 * 4180, CRLF after every record, the header first, columns in variable order): re.xpt is written
 * from re.csv this way, so that the two files hold the same values.
 *
 * A record without quotes whose texts are printable ASCII (nearly every record of a release) is
 * copied byte by byte into the observation, without making strings of its fields; its numbers are
 * read as exactly as Number() reads them (see {@link readCsvNumber}). Any other record is decoded
 * and goes through {@link XptObservationEncoder.add}, which writes texts as ASCII.
 */
import { parseCsvRecords } from './release-csv.js';
import { writeIbmFloat64, writeSasMissing } from './ibm-float.js';
import { XptObservationEncoder, type XptValue, type XptVariable } from './xpt-writer.js';

const QUOTE = 0x22;
const COMMA = 0x2c;
const CRLF = Buffer.from('\r\n', 'latin1');
/** Powers of ten a double holds exactly. */
const EXACT_POWERS_OF_TEN = Array.from({ length: 23 }, (_unused, power) => 10 ** power);
/** Digits whose integer a double holds exactly (below 2^53). */
const EXACT_DIGITS = 15;

/** Turns CSV bytes into transport observations; feed it the file in pieces with {@link push}. */
export class XptCsvTranscoder extends XptObservationEncoder {
  /** The bytes of a record cut by the end of the last piece. */
  private pending: Buffer = Buffer.alloc(0);
  /** Where a cut record and the next piece are put together, reused so as not to allocate per piece. */
  private joined: Buffer = Buffer.alloc(0);
  private headerSeen = false;

  constructor(variables: readonly XptVariable[], chunkBytes?: number) {
    super(variables, chunkBytes);
  }

  /** Takes the next bytes of the file (records may be split anywhere); returns the chunks filled. */
  push(bytes: Buffer): Buffer[] {
    const data = this.pending.length === 0 ? bytes : this.join(bytes);
    const full: Buffer[] = [];
    let position = 0;
    // Looked up again only once passed: searching from every record would read the rest of the data each time.
    let nextQuote = data.indexOf(QUOTE);
    for (;;) {
      let end = data.indexOf(CRLF, position);
      if (end === -1) break;
      if (nextQuote !== -1 && nextQuote < position) nextQuote = data.indexOf(QUOTE, position);
      const quoted = nextQuote !== -1 && nextQuote < end;
      if (quoted) end = quotedRecordEnd(data, position, end);
      if (end === -1) break;
      if (!this.headerSeen) {
        this.checkHeader(data.toString('latin1', position, end));
        this.headerSeen = true;
      } else {
        const chunk = this.addRecord(data, position, end, quoted);
        if (chunk) full.push(chunk);
      }
      position = end + 2;
    }
    // Copied: `data` may be `joined`, which the next piece overwrites.
    this.pending = Buffer.from(data.subarray(position));
    return full;
  }

  private join(bytes: Buffer): Buffer {
    const length = this.pending.length + bytes.length;
    if (this.joined.length < length) this.joined = Buffer.allocUnsafe(Math.max(length, 2 * this.joined.length));
    this.pending.copy(this.joined, 0);
    bytes.copy(this.joined, this.pending.length);
    return this.joined.subarray(0, length);
  }

  /** Call after the last bytes: throws when the file ended inside a record. */
  end(): void {
    if (this.pending.length > 0) throw new Error(`The CSV file ends inside a record (no CRLF after its last ${this.pending.length} bytes)`);
  }

  private checkHeader(header: string): void {
    const expected = this.variables.map((variable) => variable.name).join(',');
    if (header !== expected) throw new Error(`The CSV header is "${header.slice(0, 200)}", not the variables ${expected}`);
  }

  /** One record, `start` to `end` (its CR). */
  private addRecord(data: Buffer, start: number, end: number, quoted: boolean): Buffer | undefined {
    if (!quoted && this.copyPlainRecord(data, start, end)) return this.completeObservation();
    this.chunk.fill(0x20, this.used, this.used + this.observationBytes);
    const [fields] = parseCsvRecords(`${data.toString('utf8', start, end)}\r\n`).records;
    const values: XptValue[] = fields.map((field, index) =>
      this.variables[index]?.type === 'num' ? (field === '' ? null : Number(field)) : field,
    );
    return this.add(values);
  }

  /**
   * Writes a record without quotes into the next observation; false (with nothing counted) when a
   * text holds a byte outside printable ASCII, for {@link add} to write it instead.
   */
  private copyPlainRecord(data: Buffer, start: number, end: number): boolean {
    const chunk = this.chunk;
    let fieldStart = start;
    for (let index = 0; index < this.variables.length; index++) {
      let fieldEnd = fieldStart;
      while (fieldEnd < end && data[fieldEnd] !== COMMA) fieldEnd++;
      const last = index === this.variables.length - 1;
      if (last !== (fieldEnd === end)) {
        throw new RangeError(`An observation needs ${this.variables.length} values; a CSV record has ${countFields(data, start, end)}`);
      }
      const variable = this.variables[index];
      const offset = this.used + this.offsets[index];
      if (variable.type === 'num') {
        const value = readCsvNumber(data, fieldStart, fieldEnd);
        if (value === null || Number.isNaN(value)) writeSasMissing(chunk, offset);
        else writeIbmFloat64(value, chunk, offset);
      } else {
        // A byte outside printable ASCII is part of a longer character: its length is not its bytes'.
        const length = fieldEnd - fieldStart;
        const fits = length <= variable.length;
        for (let byte = 0; byte < length; byte++) {
          const code = data[fieldStart + byte];
          if (code < 0x20 || code > 0x7e) return false;
          if (fits) chunk[offset + byte] = code;
        }
        if (!fits) this.tooLong(variable, data.toString('latin1', fieldStart, fieldEnd));
      }
      fieldStart = fieldEnd + 1;
    }
    return true;
  }
}

/**
 * Where a record with quotes ends (the index of its CR), from its first CRLF; -1 when the data
 * ends first. A CRLF inside a quoted field belongs to the field: the record ends at the first CRLF
 * after an even number of quotes (RFC 4180 doubles every quote inside a field).
 */
function quotedRecordEnd(data: Buffer, start: number, firstEnd: number): number {
  let end = firstEnd;
  let quotes = 0;
  let scanned = start;
  for (;;) {
    for (let quote = data.indexOf(QUOTE, scanned); quote !== -1 && quote < end; quote = data.indexOf(QUOTE, quote + 1)) quotes++;
    if (quotes % 2 === 0) return end;
    scanned = end;
    end = data.indexOf(CRLF, end + 2);
    if (end === -1) return -1;
  }
}

function countFields(data: Buffer, start: number, end: number): number {
  let fields = 1;
  for (let index = start; index < end; index++) if (data[index] === COMMA) fields++;
  return fields;
}

/**
 * The number a CSV field holds, as Number() reads its text; null when empty. A plain decimal of
 * at most 15 digits is read without a string: its digits as an integer, divided by a power of ten,
 * both exact in a double, so the one rounding of the division gives the nearest double to the
 * decimal, which is what Number() gives (the fast path of Clinger 1990, "How to read floating
 * point numbers accurately"). Anything else goes to Number().
 */
export function readCsvNumber(data: Buffer, start: number, end: number): number | null {
  if (start === end) return null;
  let index = start;
  const negative = data[index] === 0x2d;
  if (negative) index++;
  let mantissa = 0;
  let digits = 0;
  let decimals = -1;
  for (; index < end; index++) {
    const code = data[index];
    if (code >= 0x30 && code <= 0x39) {
      mantissa = mantissa * 10 + (code - 0x30);
      digits++;
      if (decimals >= 0) decimals++;
    } else if (code === 0x2e && decimals === -1) {
      decimals = 0;
    } else {
      return Number(data.toString('latin1', start, end));
    }
  }
  if (digits === 0 || digits > EXACT_DIGITS || decimals === 0) return Number(data.toString('latin1', start, end));
  const value = decimals > 0 ? mantissa / EXACT_POWERS_OF_TEN[decimals] : mantissa;
  return negative ? -value : value;
}
