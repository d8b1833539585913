/**
 * @packageDocumentation
 * The mutation operators of the upload fuzz suite, each a fast-check arbitrary with the function
 * that applies it and says in words what it did: raw bytes (flips, truncation, inserted, deleted
 * or repeated bytes), effort CSV text (number-like cells, repeated or broken headers, rows moved,
 * scaled columns, line ends and encodings) and parsed JSON (deleted or retyped fields, extreme
 * samples, rates and start times, repeated efforts, unicode, duplicate keys, deep nesting).
 */
import fc from 'fast-check';
import { strToU8 } from 'fflate';

/** A JSON value. */
export type Json = null | boolean | number | string | Json[] | { [key: string]: Json };

/** Cells that look almost like numbers, or not at all. */
const NUMBER_LIKE_TEXT = [
  'NaN', 'nan', 'Infinity', '-Infinity', '1e309', '-1e309', '1e308', '1.7976931348623157e308', '-1.7976931348623157e308',
  '5e-324', '1e-320', '0x1F', '0b1', '', '  ', '١٢٣', '１２３', '1,5', '1.2.3', '∞', '\u0000', '💨', '-0', '+.5', '.e1',
  '1e', 'e5', '9'.repeat(400), '"1.0"', 'null', 'true', '1_000', '0.1\u200b', '\u202e1.0',
];
/** Values a JSON field should not hold. */
const HOSTILE_JSON_VALUES: readonly Json[] = [
  null, true, false, 0, -1, 1e308, -1e308, 5e-324, 2 ** 53 + 1, 'NaN', 'Infinity', '', '💨🫁', 'x'.repeat(5000), [], {}, [null],
  { $ref: '#' }, 'tidemark-session/2', '2026-13-45T99:99:99Z', '../../etc/passwd', '<script>alert(1)</script>',
];
/** Sample values that no spirometer records. */
const EXTREME_NUMBERS = [1e308, -1e308, 1.7e308, 1e300, -1e300, 1e15, 5e-324, 0, -0, 100, -100, 1e6];
const SAMPLE_RATES = [0, -1, 1e-300, 5e-324, 1, 99, 100, 100_000, 100_001, 1e308];
const START_TIMES = [1e308, -1e308, 1e15, -5, 1.7e9];
const CSV_HEADERS = [
  'time_s,volume_l,time_s,volume_l', 'time_s,volume_l\ntime_s,volume_l', 'TIME_S , VOLUME_L', 'time_s;volume_l', 'time_s,volume_ł',
  'volume_l,time_s', 'time_s,flow_l_s', '', 'time_s', '\ufefftime_s,volume_l', 'time_s,volume_l,', 'time_s,volume_l\r\n\r\n',
];
/** A position or a share, in [0, 1). */
export const fraction = fc.double({ min: 0, max: 1, noNaN: true, maxExcluded: true });
/** A position in a sequence of `length` items, from a fraction. */
const at = (length: number, position: number) => Math.min(length, Math.floor(position * (length + 1)));

/** Mutations of raw bytes, whatever the format. */
export type ByteMutation =
  | { kind: 'flip'; position: number; xor: number; count: number }
  | { kind: 'truncate'; position: number }
  | { kind: 'insert'; position: number; bytes: Uint8Array }
  | { kind: 'delete'; position: number; length: number }
  | { kind: 'repeat'; position: number; length: number };

/** Any byte mutation. */
export const byteMutation: fc.Arbitrary<ByteMutation> = fc.oneof(
  fc.record({ kind: fc.constant('flip' as const), position: fraction, xor: fc.integer({ min: 1, max: 255 }), count: fc.integer({ min: 1, max: 16 }) }),
  fc.record({ kind: fc.constant('truncate' as const), position: fraction }),
  fc.record({ kind: fc.constant('insert' as const), position: fraction, bytes: fc.uint8Array({ minLength: 1, maxLength: 64 }) }),
  fc.record({ kind: fc.constant('delete' as const), position: fraction, length: fc.integer({ min: 1, max: 4096 }) }),
  fc.record({ kind: fc.constant('repeat' as const), position: fraction, length: fc.integer({ min: 1, max: 4096 }) }),
);

/** Applies a byte mutation and says what it did. */
export function applyBytes(bytes: Uint8Array, mutation: ByteMutation): { bytes: Uint8Array; description: string } {
  const start = at(bytes.length, mutation.position);
  switch (mutation.kind) {
    case 'flip': {
      const out = bytes.slice();
      // Flip bytes spread from the position on, so one mutation can reach headers and data alike.
      for (let i = 0; i < mutation.count && out.length > 0; i++) {
        const index = (start + i * 997) % out.length;
        out[index] ^= mutation.xor;
      }
      return { bytes: out, description: `${mutation.count} byte(s) xor 0x${mutation.xor.toString(16)} from byte ${start}` };
    }
    case 'truncate':
      return { bytes: bytes.slice(0, start), description: `truncated to ${start} bytes` };
    case 'insert':
      return { bytes: concat(bytes.slice(0, start), mutation.bytes, bytes.slice(start)), description: `${mutation.bytes.length} random bytes inserted at ${start}` };
    case 'delete':
      return { bytes: concat(bytes.slice(0, start), bytes.slice(start + mutation.length)), description: `${mutation.length} bytes deleted at ${start}` };
    case 'repeat': {
      const slice = bytes.slice(start, start + mutation.length);
      return { bytes: concat(bytes.slice(0, start), slice, slice, bytes.slice(start + mutation.length)), description: `${slice.length} bytes repeated at ${start}` };
    }
  }
}

function concat(...parts: Uint8Array[]): Uint8Array {
  const out = new Uint8Array(parts.reduce((sum, part) => sum + part.length, 0));
  let offset = 0;
  for (const part of parts) {
    out.set(part, offset);
    offset += part.length;
  }
  return out;
}

/** Mutations of an effort CSV's text. */
export type CsvMutation =
  | { kind: 'cell'; row: number; column: 0 | 1; text: string }
  | { kind: 'header'; header: string }
  | { kind: 'row'; action: 'delete' | 'repeat' | 'swap' | 'blank-before'; row: number }
  | { kind: 'scale'; column: 0 | 1; factor: number }
  | { kind: 'line-ends'; style: 'crlf' | 'cr' | 'bom' | 'utf16' }
  | { kind: 'append'; text: string };

/** Any CSV text mutation. */
export const csvMutation: fc.Arbitrary<CsvMutation> = fc.oneof(
  fc.record({
    kind: fc.constant('cell' as const),
    row: fraction,
    column: fc.constantFrom(0 as const, 1 as const),
    text: fc.oneof(fc.constantFrom(...NUMBER_LIKE_TEXT), fc.string({ unit: 'grapheme', maxLength: 12 })),
  }),
  fc.record({ kind: fc.constant('header' as const), header: fc.constantFrom(...CSV_HEADERS) }),
  fc.record({ kind: fc.constant('row' as const), action: fc.constantFrom('delete' as const, 'repeat' as const, 'swap' as const, 'blank-before' as const), row: fraction }),
  fc.record({ kind: fc.constant('scale' as const), column: fc.constantFrom(0 as const, 1 as const), factor: fc.constantFrom(1e300, -1, 0, 1e-300, 1e6, 1e-7, 10) }),
  fc.record({ kind: fc.constant('line-ends' as const), style: fc.constantFrom('crlf' as const, 'cr' as const, 'bom' as const, 'utf16' as const) }),
  fc.record({ kind: fc.constant('append' as const), text: fc.oneof(fc.constantFrom('\n1,2,3', '\n\n\n', ',,,,', '\n0.0,'), fc.string({ unit: 'grapheme', maxLength: 40 })) }),
);

/** Applies a CSV text mutation and says what it did. */
export function applyCsv(csv: string, mutation: CsvMutation): { text: string; encoding?: 'utf16le'; description: string } {
  const lines = csv.replace(/\n$/, '').split('\n');
  const dataRow = () => 1 + Math.min(lines.length - 2, Math.floor((mutation as { row: number }).row * (lines.length - 1)));
  switch (mutation.kind) {
    case 'cell': {
      const row = dataRow();
      const cells = lines[row].split(',');
      cells[mutation.column] = mutation.text;
      lines[row] = cells.join(',');
      return { text: lines.join('\n') + '\n', description: `row ${row + 1} column ${mutation.column + 1} set to ${JSON.stringify(mutation.text.slice(0, 20))}` };
    }
    case 'header':
      lines[0] = mutation.header;
      return { text: lines.join('\n') + '\n', description: `header ${JSON.stringify(mutation.header)}` };
    case 'row': {
      const row = dataRow();
      if (mutation.action === 'delete') lines.splice(row, 1);
      if (mutation.action === 'repeat') lines.splice(row, 0, lines[row]);
      if (mutation.action === 'swap' && row + 1 < lines.length) [lines[row], lines[row + 1]] = [lines[row + 1], lines[row]];
      if (mutation.action === 'blank-before') lines.splice(row, 0, '');
      return { text: lines.join('\n') + '\n', description: `row ${row + 1}: ${mutation.action}` };
    }
    case 'scale': {
      const scaled = lines.map((line, index) => {
        if (index === 0) return line;
        const cells = line.split(',');
        cells[mutation.column] = String(Number(cells[mutation.column]) * mutation.factor);
        return cells.join(',');
      });
      return { text: scaled.join('\n') + '\n', description: `${mutation.column === 0 ? 'times' : 'values'} multiplied by ${mutation.factor}` };
    }
    case 'line-ends': {
      const text = lines.join('\n') + '\n';
      if (mutation.style === 'crlf') return { text: text.replace(/\n/g, '\r\n'), description: 'CRLF line ends' };
      if (mutation.style === 'cr') return { text: text.replace(/\n/g, '\r'), description: 'CR-only line ends' };
      if (mutation.style === 'bom') return { text: `\ufeff${text}`, description: 'byte-order mark' };
      return { text, encoding: 'utf16le', description: 'UTF-16 text' };
    }
    case 'append':
      return { text: lines.join('\n') + '\n' + mutation.text, description: `appended ${JSON.stringify(mutation.text.slice(0, 20))}` };
  }
}

/** Mutations of a parsed JSON document (session JSON or FHIR Bundle). */
export type JsonMutation =
  | { kind: 'delete'; path: number }
  | { kind: 'set'; path: number; value: Json }
  | { kind: 'sample'; effort: number; sample: number; value: Json }
  | { kind: 'scale-samples'; factor: number }
  | { kind: 'rate'; value: number }
  | { kind: 'start'; value: number }
  | { kind: 'effort-count'; count: number }
  | { kind: 'unicode'; path: number; text: string }
  | { kind: 'text'; action: 'duplicate-key' | 'trailing' | 'bom' | 'utf16' | 'nan-literal' | 'deep-nesting' };

/** Any JSON mutation. */
export const jsonMutation: fc.Arbitrary<JsonMutation> = fc.oneof(
  fc.record({ kind: fc.constant('delete' as const), path: fraction }),
  fc.record({ kind: fc.constant('set' as const), path: fraction, value: fc.oneof(fc.constantFrom(...HOSTILE_JSON_VALUES), fc.jsonValue({ maxDepth: 2 }) as fc.Arbitrary<Json>) }),
  fc.record({
    kind: fc.constant('sample' as const),
    effort: fraction,
    sample: fraction,
    value: fc.oneof(fc.constantFrom<Json>(...EXTREME_NUMBERS, 'NaN', null, '1', [1], {}), fc.double() as fc.Arbitrary<Json>),
  }),
  fc.record({ kind: fc.constant('scale-samples' as const), factor: fc.constantFrom(1e306, 1e300, -1, 0, 1e-310, 1e6) }),
  fc.record({ kind: fc.constant('rate' as const), value: fc.constantFrom(...SAMPLE_RATES) }),
  fc.record({ kind: fc.constant('start' as const), value: fc.constantFrom(...START_TIMES) }),
  fc.record({ kind: fc.constant('effort-count' as const), count: fc.constantFrom(0, 1, 51, 60) }),
  fc.record({ kind: fc.constant('unicode' as const), path: fraction, text: fc.string({ unit: 'grapheme', minLength: 1, maxLength: 80 }) }),
  fc.record({
    kind: fc.constant('text' as const),
    action: fc.constantFrom('duplicate-key' as const, 'trailing' as const, 'bom' as const, 'utf16' as const, 'nan-literal' as const, 'deep-nesting' as const),
  }),
);

/** Every path into the document; long number arrays (samples) and anything nested deeper than 12 count as one leaf. */
function paths(value: Json, prefix: (string | number)[] = []): (string | number)[][] {
  const out: (string | number)[][] = prefix.length ? [prefix] : [];
  if (prefix.length > 12) return out;
  if (Array.isArray(value)) {
    if (value.length > 16 && typeof value[0] === 'number') return out;
    value.forEach((item, index) => out.push(...paths(item, [...prefix, index])));
  } else if (value !== null && typeof value === 'object') {
    for (const [key, item] of Object.entries(value)) out.push(...paths(item, [...prefix, key]));
  }
  return out;
}

function pick<T>(items: readonly T[], position: number): T {
  return items[Math.min(items.length - 1, Math.floor(position * items.length))];
}

function parentOf(document: Json, path: (string | number)[]): { parent: Record<string | number, Json>; key: string | number } {
  let node = document as Record<string | number, Json>;
  for (const key of path.slice(0, -1)) node = node[key] as Record<string | number, Json>;
  return { parent: node, key: path[path.length - 1] };
}

/** The effort objects of a session document, or the SampledData of a Bundle's waveform Observations. */
function sampleHolders(document: Json): { holder: Record<string, Json>; samples: 'values' | 'data'; rate: 'sampleRateHz' | 'period' }[] {
  const root = document as Record<string, Json>;
  if (Array.isArray(root['efforts'])) {
    return (root['efforts'] as Record<string, Json>[]).filter((e) => e && typeof e === 'object').map((holder) => ({ holder, samples: 'values' as const, rate: 'sampleRateHz' as const }));
  }
  const entries = Array.isArray(root['entry']) ? (root['entry'] as Record<string, Json>[]) : [];
  return entries
    .map((entry) => (entry?.['resource'] as Record<string, Json> | undefined)?.['valueSampledData'] as Record<string, Json> | undefined)
    .filter((sampled): sampled is Record<string, Json> => !!sampled && typeof sampled === 'object')
    .map((holder) => ({ holder, samples: 'data' as const, rate: 'period' as const }));
}

/** Applies a JSON mutation (text ones to any text, structural ones to text that parses) and says what it did. */
export function applyJson(text: string, mutation: JsonMutation): { text: string; encoding?: 'utf16le'; description: string } {
  if (mutation.kind === 'text') {
    switch (mutation.action) {
      case 'duplicate-key':
        return { text: text.replace('{', '{"format":"not-it","resourceType":"Patient",'), description: 'duplicate keys before the real ones' };
      case 'trailing':
        return { text: `${text}\n{"second":"document"}`, description: 'a second document after the first' };
      case 'bom':
        return { text: `\ufeff${text}`, description: 'byte-order mark' };
      case 'utf16':
        return { text, encoding: 'utf16le', description: 'UTF-16 text' };
      case 'nan-literal':
        return { text: text.replace(/(\d+\.\d+)/, 'NaN'), description: 'a bare NaN literal' };
      case 'deep-nesting':
        return { text: text.replace(/\}\s*$/, `,"deep":${'['.repeat(2000)}${']'.repeat(2000)}}`), description: '2000 nested arrays' };
    }
  }
  const document = JSON.parse(text) as Json;
  const holders = sampleHolders(document);
  switch (mutation.kind) {
    case 'delete': {
      const path = pick(paths(document), mutation.path);
      const { parent, key } = parentOf(document, path);
      if (Array.isArray(parent)) parent.splice(key as number, 1);
      else delete parent[key];
      return { text: JSON.stringify(document), description: `deleted ${path.join('.')}` };
    }
    case 'set': {
      const path = pick(paths(document), mutation.path);
      const { parent, key } = parentOf(document, path);
      parent[key] = mutation.value;
      return { text: JSON.stringify(document), description: `${path.join('.')} set to ${JSON.stringify(mutation.value)?.slice(0, 40)}` };
    }
    case 'unicode': {
      const path = pick(paths(document), mutation.path);
      const { parent, key } = parentOf(document, path);
      parent[key] = mutation.text;
      return { text: JSON.stringify(document), description: `${path.join('.')} set to unicode text` };
    }
    case 'sample': {
      if (holders.length === 0) return { text, description: 'no samples to change' };
      const { holder, samples } = pick(holders, mutation.effort);
      if (samples === 'values' && Array.isArray(holder['values'])) {
        const values = holder['values'];
        const index = Math.min(values.length - 1, Math.floor(mutation.sample * values.length));
        values[index] = mutation.value;
        return { text: JSON.stringify(document), description: `sample ${index} set to ${JSON.stringify(mutation.value)}` };
      }
      if (typeof holder['data'] === 'string') {
        const tokens = holder['data'].split(' ');
        const index = Math.min(tokens.length - 1, Math.floor(mutation.sample * tokens.length));
        tokens[index] = typeof mutation.value === 'number' ? String(mutation.value) : JSON.stringify(mutation.value);
        holder['data'] = tokens.join(' ');
        return { text: JSON.stringify(document), description: `SampledData token ${index} set to ${tokens[index]}` };
      }
      return { text, description: 'no samples to change' };
    }
    case 'scale-samples': {
      for (const { holder, samples } of holders) {
        if (samples === 'values' && Array.isArray(holder['values'])) holder['values'] = (holder['values'] as number[]).map((v) => v * mutation.factor);
        else holder['factor'] = mutation.factor;
      }
      return { text: JSON.stringify(document), description: `samples multiplied by ${mutation.factor}` };
    }
    case 'rate': {
      // A Bundle gives the period in milliseconds.
      for (const { holder, rate } of holders) holder[rate] = rate === 'period' && mutation.value !== 0 ? 1000 / mutation.value : mutation.value;
      return { text: JSON.stringify(document), description: `sampling rate ${mutation.value} Hz` };
    }
    case 'start': {
      for (const { holder, samples } of holders) {
        if (samples === 'values') holder['startTimeS'] = mutation.value;
        else (holder['origin'] as Record<string, Json>)['value'] = mutation.value;
      }
      return { text: JSON.stringify(document), description: `start time (or origin) ${mutation.value}` };
    }
    case 'effort-count': {
      const root = document as Record<string, Json>;
      const list = (Array.isArray(root['efforts']) ? root['efforts'] : root['entry']) as Json[] | undefined;
      if (!Array.isArray(list) || list.length === 0) return { text, description: 'no efforts to repeat' };
      const repeated = Array.from({ length: mutation.count }, (_, i) => list[i % list.length]);
      if (Array.isArray(root['efforts'])) root['efforts'] = repeated;
      else root['entry'] = repeated;
      return { text: JSON.stringify(document), description: `${mutation.count} efforts` };
    }
  }
}

/** The bytes of mutated text: UTF-8, or UTF-16 when a mutation asked for it. */
export function encode(result: { text: string; encoding?: 'utf16le' }): Uint8Array {
  return result.encoding ? new Uint8Array(Buffer.from(result.text, 'utf16le')) : strToU8(result.text);
}
