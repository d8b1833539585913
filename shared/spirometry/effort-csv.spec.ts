import { describe, expect, it } from '@jest/globals';
import { captureInputError as errorOf } from './testing/capture-input-error.js';
import { parseEffortCsv } from './effort-csv.js';
import { DEFAULT_ENGINE_PARAMETERS, analyzeRecording } from './effort-analysis.js';
import { effortToCsv, generateEffort } from './synthetic/curve-generator.js';

/** `rows` seconds of a 100 Hz volume ramp, formatted as an effort CSV (header, then time and value per row). */
function csv(header: string, seconds = 2, rateHz = 100, eol = '\n'): string {
  const lines = [header];
  for (let i = 0; i <= seconds * rateHz; i++) lines.push(`${(i / rateHz).toFixed(3)},${(i * 0.001).toFixed(4)}`);
  return lines.join(eol) + eol;
}


describe('parseEffortCsv (effort CSV: time_s with volume_l or flow_l_s)', () => {
  it('reads both accepted headers and derives the sampling rate', () => {
    const volume = parseEffortCsv(csv('time_s,volume_l'), 'e1.csv');
    expect(volume.signal).toBe('volume');
    expect(volume.sampleRateHz).toBe(100);
    expect(volume.values.length).toBe(201);
    expect(volume.values[200]).toBeCloseTo(0.2, 10);
    expect(parseEffortCsv(csv('time_s,flow_l_s'), 'e2.csv').signal).toBe('flow');
  });

  it('tolerates a byte-order mark, CRLF, spaces around cells and trailing blank lines', () => {
    const text = '\uFEFF' + csv(' time_s , volume_l ', 2, 100, '\r\n').replace(/,/g, ' , ') + '\r\n\r\n  \r\n';
    const rec = parseEffortCsv(text, 'e1.csv');
    expect(rec.values.length).toBe(201);
    expect(rec.startTimeS).toBe(0);
  });

  it('accepts times printed with few decimals at a rate that does not divide them (rounding, not jitter)', () => {
    const lines = ['time_s,flow_l_s'];
    for (let i = 0; i <= 600; i++) lines.push(`${(i / 300).toFixed(3)},0`);
    expect(parseEffortCsv(lines.join('\n'), 'e.csv').sampleRateHz).toBe(300);
  });

  it('reads what the synthetic generator writes, sample for sample', () => {
    const { recording } = generateEffort({ sampleRateHz: 1000, signal: 'flow' }, 9);
    const back = parseEffortCsv(effortToCsv(recording), 'e.csv');
    expect(back.sampleRateHz).toBe(1000);
    expect(back.values.length).toBe(recording.values.length);
    expect(Math.abs(back.values[2000] - recording.values[2000])).toBeLessThan(1e-6);
  });

  // Each bad input gets a stable code and a message naming the file and the problem.
  const bad: [string, string, string, RegExp, { row?: number; column?: string }][] = [
    ['empty file', '', 'csv-empty', /e\.csv: the file is empty/, {}],
    ['only blank lines', '\n \n', 'csv-empty', /empty/, {}],
    ['unknown header', csv('t,vol'), 'csv-header', /unknown header "t,vol".*accepted headers are "time_s,volume_l" or "time_s,flow_l_s"/, { row: 1 }],
    ['missing header', csv('time_s,volume_l').split('\n').slice(1).join('\n'), 'csv-header', /header line is missing \(row 1 is "0\.000,0\.0000"\)/, { row: 1 }],
    ['text in a number', csv('time_s,volume_l').replace('0.050,0.0050', '0.050,abc'), 'csv-number', /row 7, column volume_l: "abc" is not a number/, { row: 7, column: 'volume_l' }],
    ['empty cell', csv('time_s,volume_l').replace('0.050,0.0050', ',0.0050'), 'csv-number', /row 7, column time_s: an empty cell is not a number/, { row: 7, column: 'time_s' }],
    ['hexadecimal', csv('time_s,volume_l').replace('0.050,0.0050', '0.050,0x10'), 'csv-number', /row 7, column volume_l: "0x10"/, { row: 7 }],
    ['infinite value', csv('time_s,volume_l').replace('0.050,0.0050', '0.050,1e999'), 'csv-non-finite', /row 7, column volume_l: "1e999" is not a finite number/, { row: 7 }],
    ['three columns', csv('time_s,volume_l').replace('0.050,0.0050', '0.050,0.0050,1'), 'csv-columns', /row 7 has 3 columns; expected 2/, { row: 7 }],
    ['blank row inside', csv('time_s,volume_l').replace('0.050,0.0050\n', '\n'), 'csv-columns', /row 7 is blank but data follows/, { row: 7 }],
    ['time going back', csv('time_s,volume_l').replace('0.050,0.0050', '0.030,0.0050'), 'csv-time-order', /time does not increase on row 7: 0\.030 s follows 0\.04 s/, { row: 7 }],
    ['missing sample', csv('time_s,volume_l').replace('0.050,0.0050\n', ''), 'csv-time-uniform', /not uniform: the interval ending on row 7 is 20\.000 ms/, { row: 7 }],
    ['too slow (50 Hz)', csv('time_s,volume_l', 2, 50), 'sample-rate', /50\.0 Hz is below the minimum of 100 Hz/, {}],
    ['too short (0.5 s)', csv('time_s,volume_l', 0.5), 'too-few-samples', /51 rows covering 0\.500 s; a recording must cover at least 1 s/, {}],

    // Limits of sample-limits.ts (common practice); a sample near the top of the double range once hung the engine.
    ['a volume near the top of the double range', csv('time_s,volume_l').replace('0.050,0.0050', '0.050,1.7e308'), 'csv-range', /row 7, column volume_l: 1\.7e308 L is beyond the ±100 L/, { row: 7, column: 'volume_l' }],
    ['a flow beyond 100 L/s', csv('time_s,flow_l_s').replace('0.050,0.0050', '0.050,-150'), 'csv-range', /row 7, column flow_l_s: -150 L\/s is beyond the ±100 L\/s/, { row: 7, column: 'flow_l_s' }],
    ['a time beyond 1e10 s', csv('time_s,volume_l').replace('0.050,0.0050', '2e10,0.0050'), 'csv-range', /row 7, column time_s: 2e10 s is beyond/, { row: 7, column: 'time_s' }],
  ];

  it.each(bad)('rejects %s', (_name, text, code, message, location) => {
    const error = errorOf(() => parseEffortCsv(text, 'e.csv'));
    expect(error.code).toBe(code);
    expect(error.message).toMatch(message);
    expect(error.message.startsWith('e.csv: ')).toBe(true);
    expect(error.location).toMatchObject({ file: 'e.csv', ...location });
  });

  it('rejects a recording without a forced expiration at analysis (code no-blow)', () => {
    // 3 s of quiet tidal breathing: peak flow about 0.5 L/s, under the 1 L/s of any forced blow.
    const lines = ['time_s,flow_l_s'];
    for (let i = 0; i <= 300; i++) lines.push(`${(i / 100).toFixed(2)},${(0.5 * Math.sin((2 * Math.PI * i) / 300)).toFixed(4)}`);
    const error = errorOf(() => analyzeRecording(parseEffortCsv(lines.join('\n'), 'quiet.csv'), DEFAULT_ENGINE_PARAMETERS));
    expect(error.code).toBe('no-blow');
    expect(error.message).toMatch(/^quiet\.csv: no forced expiration found: the highest expiratory flow is 0\.50 L\/s/);
  });

  it('rejects a blow too small to be forced (code no-blow, names the volume)', () => {
    const lines = ['time_s,flow_l_s'];
    // A 0.1 s puff at 1.5 L/s: 0.15 L.
    for (let i = 0; i <= 200; i++) lines.push(`${(i / 100).toFixed(2)},${i >= 50 && i < 60 ? 1.5 : 0}`);
    const error = errorOf(() => analyzeRecording(parseEffortCsv(lines.join('\n'), 'puff.csv'), DEFAULT_ENGINE_PARAMETERS));
    expect(error.code).toBe('no-blow');
    expect(error.message).toMatch(/largest expired volume is 0\.1\d\d L/);
  });
});
