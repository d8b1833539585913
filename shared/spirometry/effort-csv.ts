import { type Recording, type SignalKind, SpirometryInputError } from './model.js';
import { MAX_SAMPLE_MAGNITUDE, MAX_TIME_MAGNITUDE_S } from './sample-limits.js';
import { toFloat64Array } from './signal.js';

/** Limits applied while reading an effort CSV. */
export interface EffortCsvOptions {
  /** Lowest accepted sampling rate (Hz); ATS/ERS 2019 asks for at least 100 Hz [memory]. */
  readonly minSampleRateHz: number;
  /** Shortest recording accepted (s): less cannot hold a forced expiration [practice]. */
  readonly minDurationS: number;
  /** Allowed deviation of each sampling interval from the mean one, as a fraction of it [practice]. */
  readonly intervalTolerance: number;
}

/** Limits used when the caller gives none: 100 Hz [memory], 1 s and 1 % [practice]. */
export const DEFAULT_EFFORT_CSV_OPTIONS: EffortCsvOptions = {
  minSampleRateHz: 100,
  minDurationS: 1,
  intervalTolerance: 0.01,
};

const ACCEPTED_HEADERS: Readonly<Record<string, SignalKind>> = {
  'time_s,volume_l': 'volume',
  'time_s,flow_l_s': 'flow',
};
const ACCEPTED_HEADER_LIST = Object.keys(ACCEPTED_HEADERS)
  .map((h) => `"${h}"`)
  .join(' or ');

/**
 * Reads one effort CSV: header `time_s,volume_l` or
 * `time_s,flow_l_s`, then one row per uniformly spaced sample. Tolerates a byte-order
 * mark, CRLF line ends, spaces around cells and trailing blank lines; anything else
 * is a {@link SpirometryInputError} naming the file, the row (1-based line of the file)
 * and the column. Codes: `csv-empty`, `csv-header`, `csv-columns`, `csv-number`,
 * `csv-non-finite`, `csv-range` (beyond the limits of sample-limits.ts), `csv-time-order`,
 * `csv-time-uniform`, `sample-rate`, `too-few-samples`.
 * Intervals may differ from the mean by 1 % plus the rounding of the printed times
 * (one unit of their last decimal, at most 30 % of the interval).
 */
export function parseEffortCsv(
  text: string,
  fileName: string,
  options: EffortCsvOptions = DEFAULT_EFFORT_CSV_OPTIONS,
): Recording {
  const fail = (code: string, message: string, row?: number, column?: string): never => {
    throw new SpirometryInputError(code, `${fileName}: ${message}`, { file: fileName, row, column });
  };
  let pos = text.charCodeAt(0) === 0xfeff ? 1 : 0;
  const len = text.length;

  const nextLine = (): string | null => {
    if (pos >= len) return null;
    let end = text.indexOf('\n', pos);
    if (end < 0) end = len;
    const line = text.charCodeAt(end - 1) === 13 ? text.slice(pos, end - 1) : text.slice(pos, end);
    pos = end + 1;
    return line;
  };

  let lineNo = 1;
  let headerLine = nextLine();
  while (headerLine !== null && headerLine.trim() === '') {
    headerLine = nextLine();
    lineNo++;
  }
  if (headerLine === null) fail('csv-empty', 'the file is empty; expected a header line ' + ACCEPTED_HEADER_LIST);
  const header = (headerLine as string)
    .split(',')
    .map((cell) => cell.trim().toLowerCase())
    .join(',');
  const signal = ACCEPTED_HEADERS[header];
  if (signal === undefined) {
    const shown = (headerLine as string).trim().slice(0, 80);
    const looksNumeric = /^[\s+\-.\d]/.test(shown);
    fail(
      'csv-header',
      (looksNumeric ? `the header line is missing (row ${lineNo} is "${shown}")` : `unknown header "${shown}" on row ${lineNo}`) +
        `; accepted headers are ${ACCEPTED_HEADER_LIST}`,
      lineNo,
    );
  }
  const valueColumn = signal === 'volume' ? 'volume_l' : 'flow_l_s';

  const times: number[] = [];
  const values: number[] = [];
  let timeDecimals = 0;
  let blankRow = 0;
  let firstDataRow = 0;
  for (let line = nextLine(); line !== null; line = nextLine()) {
    lineNo++;
    const comma = line.indexOf(',');
    if (comma < 0 && line.trim() === '') {
      if (blankRow === 0) blankRow = lineNo;
      continue;
    }
    if (blankRow !== 0) fail('csv-columns', `row ${blankRow} is blank but data follows it on row ${lineNo}`, blankRow);
    if (comma < 0 || line.indexOf(',', comma + 1) >= 0) {
      const count = comma < 0 ? 1 : line.split(',').length;
      fail('csv-columns', `row ${lineNo} has ${count} columns; expected 2 (time_s,${valueColumn})`, lineNo);
    }
    const timeCell = line.slice(0, comma).trim();
    const valueCell = line.slice(comma + 1).trim();
    const timeS = readNumber(timeCell, lineNo, 'time_s', fail);
    const value = readNumber(valueCell, lineNo, valueColumn, fail);
    if (Math.abs(timeS) > MAX_TIME_MAGNITUDE_S) {
      fail('csv-range', `row ${lineNo}, column time_s: ${timeCell.slice(0, 40)} s is beyond the ±${MAX_TIME_MAGNITUDE_S} s a time may have`, lineNo, 'time_s');
    }
    if (Math.abs(value) > MAX_SAMPLE_MAGNITUDE) {
      const unit = signal === 'volume' ? 'L' : 'L/s';
      fail(
        'csv-range',
        `row ${lineNo}, column ${valueColumn}: ${valueCell.slice(0, 40)} ${unit} is beyond the ±${MAX_SAMPLE_MAGNITUDE} ${unit} any breath stays within`,
        lineNo,
        valueColumn,
      );
    }
    const dot = timeCell.indexOf('.');
    if (dot >= 0 && timeCell.indexOf('e') < 0 && timeCell.indexOf('E') < 0) {
      timeDecimals = Math.max(timeDecimals, timeCell.length - dot - 1);
    }
    const n = times.length;
    if (n > 0 && !(timeS > times[n - 1])) {
      fail(
        'csv-time-order',
        `time does not increase on row ${lineNo}: ${timeCell} s follows ${times[n - 1]} s`,
        lineNo,
        'time_s',
      );
    }
    if (n === 0) firstDataRow = lineNo;
    times.push(timeS);
    values.push(value);
  }

  const n = times.length;
  const durationS = n > 1 ? times[n - 1] - times[0] : 0;
  if (n < 2 || durationS < options.minDurationS) {
    fail(
      'too-few-samples',
      `too few samples: ${n} row${n === 1 ? '' : 's'} covering ${durationS.toFixed(3)} s; ` +
        `a recording must cover at least ${options.minDurationS} s`,
    );
  }
  const periodS = durationS / (n - 1);
  // Times printed with few decimals carry up to one unit of the last digit of rounding per interval.
  const resolutionS = timeDecimals > 0 ? Math.pow(10, -timeDecimals) : 0;
  const toleranceS = options.intervalTolerance * periodS + Math.min(resolutionS, 0.3 * periodS);
  for (let i = 1; i < n; i++) {
    const intervalS = times[i] - times[i - 1];
    if (Math.abs(intervalS - periodS) > toleranceS) {
      // Blank lines can only trail the data, so sample i sits on file line firstDataRow + i.
      const row = firstDataRow + i;
      fail(
        'csv-time-uniform',
        `sampling is not uniform: the interval ending on row ${row} is ${(intervalS * 1000).toFixed(3)} ms ` +
          `but the mean interval is ${(periodS * 1000).toFixed(3)} ms (tolerance ${(toleranceS * 1000).toFixed(3)} ms)`,
        row,
        'time_s',
      );
    }
  }
  const sampleRateHz = snapRate(1 / periodS);
  if (sampleRateHz < options.minSampleRateHz * (1 - options.intervalTolerance)) {
    fail(
      'sample-rate',
      `sampling rate ${sampleRateHz.toFixed(1)} Hz is below the minimum of ${options.minSampleRateHz} Hz`,
    );
  }
  return { signal: signal as SignalKind, sampleRateHz, startTimeS: times[0], values: toFloat64Array(values), label: fileName };
}

function readNumber(
  cell: string,
  row: number,
  column: string,
  fail: (code: string, message: string, row?: number, column?: string) => never,
): number {
  const c = cell.charCodeAt(0);
  // Number() alone would accept "", "0x1F" and "Infinity"; a decimal number starts with a digit, sign or point.
  const startsLikeNumber = (c >= 48 && c <= 57) || c === 43 || c === 45 || c === 46;
  const prefixed = c === 48 && cell.length > 1 && 'xXbBoO'.includes(cell[1]);
  const value = startsLikeNumber && !prefixed ? Number(cell) : Number.NaN;
  if (Number.isNaN(value)) {
    const shown = cell === '' ? 'an empty cell' : `"${cell.slice(0, 40)}"`;
    return fail('csv-number', `row ${row}, column ${column}: ${shown} is not a number`, row, column);
  }
  if (!Number.isFinite(value)) {
    return fail('csv-non-finite', `row ${row}, column ${column}: "${cell.slice(0, 40)}" is not a finite number`, row, column);
  }
  return value;
}

/** Rates computed from printed times differ from the device's rate by rounding: snap to whole hertz when that close. */
function snapRate(rateHz: number): number {
  const whole = Math.round(rateHz);
  return Math.abs(rateHz - whole) < 1e-6 * rateHz ? whole : rateHz;
}
