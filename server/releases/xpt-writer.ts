/**
 * SAS transport files, version 5 (XPORT), written from SAS technical note TS-140 "The record
 * layout of a data set in SAS transport (XPORT) format". A file is a sequence of 80-byte records:
 * the library header (3 records), one member (data set) header (4 records), a NAMESTR header and
 * one 140-byte NAMESTR per variable (packed, padded to a record boundary with blanks), an
 * observation header, then the observations back to back, the last record padded with blanks.
 * Numbers are 8-byte IBM doubles (./ibm-float.ts); characters are ASCII padded with blanks.
 *
 * Pure: bytes in, bytes out. Large data sets stream through {@link XptObservationEncoder}, which
 * hands back full chunks for the caller to write wherever it likes.
 */
import { IBM_FLOAT_BYTES, writeIbmFloat64, writeSasMissing } from './ibm-float.js';

/** One variable of a transport data set. */
export interface XptVariable {
  /** SAS name: letters, digits, underscore, not starting with a digit, at most 8 characters (stored upper case). */
  readonly name: string;
  /** At most 40 characters. */
  readonly label: string;
  readonly type: 'num' | 'char';
  /** Bytes in each observation: 8 for numbers, 1–200 for characters (the version 5 limit). */
  readonly length: number;
}

/** The member header of a data set. */
export interface XptDataset {
  /** SAS data set name, at most 8 characters. */
  readonly name: string;
  /** At most 40 characters. */
  readonly label: string;
  readonly variables: readonly XptVariable[];
  /** Written in the headers as ddMMMyy:hh:mm:ss (UTC). Pass a time taken from the data for reproducible files. */
  readonly createdAt: Date;
}

/** A value of one variable in one observation; null (or undefined) is missing. */
export type XptValue = string | number | null | undefined;

/** Length of every transport record. */
export const XPT_RECORD_BYTES = 80;
/** Bytes of one NAMESTR record (140 on every platform but VAX/VMS, TS-140). */
export const XPT_NAMESTR_BYTES = 140;
/** Longest character variable a version 5 transport file holds. */
export const XPT_MAX_CHAR_LENGTH = 200;

/** Put in the headers where SAS puts its version and operating system: who wrote the file. */
const WRITER_VERSION = '9.4';
const WRITER_SYSTEM = 'TIDEMARK';
const MONTHS = ['JAN', 'FEB', 'MAR', 'APR', 'MAY', 'JUN', 'JUL', 'AUG', 'SEP', 'OCT', 'NOV', 'DEC'];
const SAS_NAME = /^[A-Z_][A-Z0-9_]{0,7}$/;
const ASCII_PRINTABLE = /^[\x20-\x7e]*$/;

/**
 * A text as the transport file holds it: ASCII only. Accents are dropped (é → e) and any other
 * character outside printable ASCII becomes "?", so that the byte length equals the text length.
 */
export function toTransportText(text: string): string {
  if (ASCII_PRINTABLE.test(text)) return text;
  return text
    .normalize('NFD')
    .replace(/[\u0300-\u036f]/g, '')
    .replace(/[^\x20-\x7e]/g, '?');
}

/** Checks a data set's names, labels and lengths against the version 5 limits; throws naming the first problem. */
export function checkXptDataset(dataset: XptDataset): void {
  const problem = (what: string) => {
    throw new RangeError(`Transport data set ${dataset.name}: ${what}`);
  };
  if (!SAS_NAME.test(dataset.name)) problem('the name must be 1-8 upper-case letters, digits or underscores, not starting with a digit');
  if (dataset.label.length > 40 || !ASCII_PRINTABLE.test(dataset.label)) problem('the label must be at most 40 ASCII characters');
  if (dataset.variables.length === 0) problem('it has no variables');
  if (dataset.variables.length > 9999) problem('it has more than 9999 variables');
  const seen = new Set<string>();
  for (const variable of dataset.variables) {
    if (!SAS_NAME.test(variable.name)) problem(`variable "${variable.name}": the name must be 1-8 upper-case letters, digits or underscores`);
    if (seen.has(variable.name)) problem(`variable ${variable.name} appears twice`);
    seen.add(variable.name);
    if (variable.label.length > 40 || !ASCII_PRINTABLE.test(variable.label)) problem(`variable ${variable.name}: the label must be at most 40 ASCII characters`);
    if (variable.type === 'num' && variable.length !== IBM_FLOAT_BYTES) problem(`variable ${variable.name}: numbers take 8 bytes`);
    if (variable.type === 'char' && (!Number.isInteger(variable.length) || variable.length < 1 || variable.length > XPT_MAX_CHAR_LENGTH)) {
      problem(`variable ${variable.name}: a character length must be 1-${XPT_MAX_CHAR_LENGTH} bytes (got ${variable.length})`);
    }
  }
}

/** A date-time as the headers hold it: ddMMMyy:hh:mm:ss in UTC. */
export function xptDateTime(at: Date): string {
  const two = (n: number) => String(n).padStart(2, '0');
  return (
    `${two(at.getUTCDate())}${MONTHS[at.getUTCMonth()]}${two(at.getUTCFullYear() % 100)}:` +
    `${two(at.getUTCHours())}:${two(at.getUTCMinutes())}:${two(at.getUTCSeconds())}`
  );
}

/** Every header record up to and including the observation header: what precedes the first observation. */
export function xptHeader(dataset: XptDataset): Buffer {
  checkXptDataset(dataset);
  const stamp = xptDateTime(dataset.createdAt);
  const text = (value: string, width: number) => value.padEnd(width, ' ').slice(0, width);
  const records = [
    'HEADER RECORD*******LIBRARY HEADER RECORD!!!!!!!000000000000000000000000000000  ',
    text('SAS', 8) + text('SAS', 8) + text('SASLIB', 8) + text(WRITER_VERSION, 8) + text(WRITER_SYSTEM, 8) + ' '.repeat(24) + stamp,
    text(stamp, 80),
    // The 140 at the end is the length of each NAMESTR record.
    'HEADER RECORD*******MEMBER  HEADER RECORD!!!!!!!000000000000000001600000000140  ',
    'HEADER RECORD*******DSCRPTR HEADER RECORD!!!!!!!000000000000000000000000000000  ',
    text('SAS', 8) + text(dataset.name, 8) + text('SASDATA', 8) + text(WRITER_VERSION, 8) + text(WRITER_SYSTEM, 8) + ' '.repeat(24) + stamp,
    stamp + ' '.repeat(16) + text(dataset.label, 40) + ' '.repeat(8),
    `HEADER RECORD*******NAMESTR HEADER RECORD!!!!!!!000000${String(dataset.variables.length).padStart(4, '0')}00000000000000000000  `,
  ];
  const head = Buffer.from(records.join(''), 'latin1');
  const namestrs = padToRecord(Buffer.concat(namestrRecords(dataset.variables)));
  const observationHeader = Buffer.from('HEADER RECORD*******OBS     HEADER RECORD!!!!!!!000000000000000000000000000000  ', 'latin1');
  return Buffer.concat([head, namestrs, observationHeader]);
}

function namestrRecords(variables: readonly XptVariable[]): Buffer[] {
  let position = 0;
  return variables.map((variable, index) => {
    const record = Buffer.alloc(XPT_NAMESTR_BYTES, 0);
    record.writeInt16BE(variable.type === 'num' ? 1 : 2, 0); // ntype
    record.writeInt16BE(0, 2); // nhfun: hash of the name, always 0
    record.writeInt16BE(variable.length, 4); // nlng
    record.writeInt16BE(index + 1, 6); // nvar0: variable number
    record.write(variable.name.padEnd(8, ' '), 8, 8, 'latin1'); // nname
    record.write(variable.label.padEnd(40, ' '), 16, 40, 'latin1'); // nlabel
    record.write(' '.repeat(8), 56, 8, 'latin1'); // nform: no format
    // nfl, nfd, nfj (format width, decimals, justification) and nfill stay zero.
    record.write(' '.repeat(8), 72, 8, 'latin1'); // niform: no informat
    // nifl, nifd stay zero.
    record.writeInt32BE(position, 84); // npos: offset of the value in the observation
    // rest[52]: unused in version 5, left zero.
    position += variable.length;
    return record;
  });
}

/** Pads with blanks to a whole number of 80-byte records. */
function padToRecord(bytes: Buffer): Buffer {
  const remainder = bytes.length % XPT_RECORD_BYTES;
  return remainder === 0 ? bytes : Buffer.concat([bytes, Buffer.alloc(XPT_RECORD_BYTES - remainder, 0x20)]);
}

/**
 * Encodes observations into chunks of about `chunkBytes`: {@link add} returns a full chunk when
 * one is ready, {@link finish} the rest with the blank padding of the last record. A chunk handed
 * back with {@link recycle} once written is filled again, so that a large file reuses a few
 * buffers instead of leaving hundreds for the garbage collector.
 */
export class XptObservationEncoder {
  /** Bytes of one observation. */
  readonly observationBytes: number;
  /** Where each variable's value starts within an observation. */
  protected readonly offsets: number[];
  /** The chunk being filled; the next observation starts at {@link used}. */
  protected chunk: Buffer;
  protected used = 0;
  private total = 0;
  /** Written chunks handed back, to be filled again. */
  private readonly spare: Buffer[] = [];

  constructor(
    protected readonly variables: readonly XptVariable[],
    chunkBytes = 1 << 20,
  ) {
    this.offsets = [];
    let position = 0;
    for (const variable of variables) {
      this.offsets.push(position);
      position += variable.length;
    }
    this.observationBytes = position;
    const perChunk = Math.max(1, Math.floor(chunkBytes / this.observationBytes));
    // Blank from the start, so that character values need only their characters written.
    this.chunk = Buffer.alloc(perChunk * this.observationBytes, 0x20);
  }

  /** Observations encoded so far. */
  get count(): number {
    return this.total;
  }

  /** Adds one observation (values in variable order); returns a full chunk to write, if one is ready. */
  add(values: readonly XptValue[]): Buffer | undefined {
    if (values.length !== this.variables.length) {
      throw new RangeError(`An observation needs ${this.variables.length} values, got ${values.length}`);
    }
    const start = this.used;
    for (let index = 0; index < this.variables.length; index++) {
      this.encodeValue(this.variables[index], values[index], start + this.offsets[index]);
    }
    return this.completeObservation();
  }

  /** The observations not yet handed out, padded with blanks to the end of the last 80-byte record. */
  finish(): Buffer {
    const written = this.total * this.observationBytes;
    const padding = (XPT_RECORD_BYTES - (written % XPT_RECORD_BYTES)) % XPT_RECORD_BYTES;
    const rest = Buffer.alloc(this.used + padding, 0x20);
    this.chunk.copy(rest, 0, 0, this.used);
    this.used = 0;
    return rest;
  }

  /** Counts the observation written at {@link used}; returns the chunk when it is full. */
  protected completeObservation(): Buffer | undefined {
    this.used += this.observationBytes;
    this.total++;
    if (this.used + this.observationBytes <= this.chunk.length) return undefined;
    const full = this.chunk;
    this.chunk = this.spare.pop()?.fill(0x20) ?? Buffer.alloc(full.length, 0x20);
    this.used = 0;
    return full;
  }

  /** Hands back a chunk returned by {@link add} once its bytes are written (and no longer needed). */
  recycle(chunk: Buffer): void {
    if (chunk.length === this.chunk.length && chunk !== this.chunk && this.spare.length < 2) this.spare.push(chunk);
  }

  private encodeValue(variable: XptVariable, value: XptValue, offset: number): void {
    const chunk = this.chunk;
    if (variable.type === 'num') {
      if (value === null || value === undefined || (typeof value === 'number' && Number.isNaN(value))) {
        writeSasMissing(chunk, offset);
        return;
      }
      if (typeof value !== 'number') throw new TypeError(`${variable.name} is numeric; got the text "${value}"`);
      writeIbmFloat64(value, chunk, offset);
      return;
    }
    // The chunk is blank already: only the characters are written. A byte at a time beats
    // Buffer.write for texts this short, and checks that each is printable ASCII on the way.
    if (value === null || value === undefined || value === '') return;
    let text = typeof value === 'string' ? value : String(value);
    if (text.length > variable.length) this.tooLong(variable, text);
    for (let index = 0; index < text.length; index++) {
      const code = text.charCodeAt(index);
      if (code < 0x20 || code > 0x7e) {
        text = toTransportText(text);
        if (text.length > variable.length) this.tooLong(variable, text);
        chunk.fill(0x20, offset, offset + variable.length);
        chunk.write(text, offset, text.length, 'latin1');
        return;
      }
      chunk[offset + index] = code;
    }
  }

  protected tooLong(variable: XptVariable, text: string): never {
    throw new RangeError(`${variable.name} holds ${variable.length} characters; "${text}" has ${text.length}`);
  }
}

/** A whole transport file in memory: for small data sets and tests. */
export function writeXpt(dataset: XptDataset, observations: Iterable<readonly XptValue[]>): Buffer {
  const parts = [xptHeader(dataset)];
  const encoder = new XptObservationEncoder(dataset.variables);
  for (const observation of observations) {
    const chunk = encoder.add(observation);
    if (chunk) parts.push(chunk);
  }
  parts.push(encoder.finish());
  return Buffer.concat(parts);
}
