import { execFile } from 'node:child_process';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { describe, expect, it } from '@jest/globals';
import { GLI_CALCULATOR_ETHNIC_CODES, REFERENCE_DIR, describeWithReference, readReferenceCsv } from './reference-folder.js';

const HEADER =
  'fev1_predicted,fev1_lln,fev1_uln,fvc_predicted,fvc_lln,fvc_uln,fev1fvc_predicted,fev1fvc_lln,fev1fvc_uln,' +
  'fef2575_predicted,fef2575_lln,fef2575_uln,fef75_predicted,fef75_lln,fef75_uln';

interface Run {
  readonly code: number;
  readonly stdout: string;
  readonly stderr: string;
}

/** Runs the command as an operator would (through tsx), without TIDEMARK_REFERENCE_DIR set. */
function predict(args: string[], csv: string): Promise<Run> {
  const input = path.join(fs.mkdtempSync(path.join(os.tmpdir(), 'tidemark-predict-')), 'input.csv');
  fs.writeFileSync(input, csv);
  const env = { ...process.env };
  delete env['TIDEMARK_REFERENCE_DIR'];
  return new Promise((resolve) => {
    execFile('npx', ['tsx', 'server/cli/predict.ts', ...args, input], { cwd: process.cwd(), env }, (error, stdout, stderr) => {
      resolve({ code: error ? Number((error as { code?: number }).code ?? 1) : 0, stdout, stderr });
    });
  });
}

const table = (stdout: string) => stdout.trimEnd().split('\n').map((line) => line.split(','));

describeWithReference(['gli2012/calculator-inputs-sample.csv', 'gli2012/calculator-output-sample.csv', 'gli2012/splines.csv'])(
  'predict command with GLI-2012',
  () => {
    it('prints the 15 columns, one row per input row, matching the GLI calculator to 3 decimals', async () => {
      // Source: GLI-2012 web calculator output, first 12 rows of calculator-output-sample.csv.
      const inputs = readReferenceCsv('gli2012/calculator-inputs-sample.csv').slice(0, 12);
      const outputs = readReferenceCsv('gli2012/calculator-output-sample.csv').slice(0, 12);
      const csv = [
        'sex,age,height_cm,ethnicity',
        ...inputs.map((r) => `${r['sex']},${r['age']},${r['height']},${GLI_CALCULATOR_ETHNIC_CODES[r['ethnic'] as '1']}`),
      ].join('\n');
      const run = await predict(['--equations', 'gli-2012', '--reference-dir', REFERENCE_DIR], csv);
      expect(run.stderr).toBe('');
      expect(run.code).toBe(0);
      const [header, ...rows] = table(run.stdout);
      expect(header.join(',')).toBe(HEADER);
      expect(rows).toHaveLength(12);
      rows.forEach((row, index) => {
        expect(row).toHaveLength(15);
        header.forEach((column, c) => {
          // Unrounded output: more than 3 decimals, within half a unit of the calculator's figure.
          expect(Math.abs(Number(row[c]) - Number(outputs[index][column]))).toBeLessThanOrEqual(0.0005 + 1e-9);
        });
      });
      expect(rows[0][0]).toMatch(/^\d+\.\d{4,}$/);
    });
  },
);

describeWithReference(['gli-global-2022/lookup-tables.xlsx', 'gli-global-2022/cross-check-values.csv'])(
  'predict command with GLI Global',
  () => {
    it('fills FEV1, FVC and FEV1/FVC and leaves the FEF columns empty', async () => {
      // Source: cross-check-values.csv (Bowerman 2023 equations), first row: M, 10 y, 155 cm.
      const run = await predict(['--equations', 'gli-global-2022', '--reference-dir', REFERENCE_DIR], 'sex,age,height_cm\nmale,10,155\n');
      expect(run.code).toBe(0);
      const [, row] = table(run.stdout);
      expect(Number(row[0])).toBeCloseTo(2.51526964464081, 10);
      expect(Number(row[1])).toBeCloseTo(1.97793181377276, 10);
      expect(Number(row[6])).toBeCloseTo(0.849134723011298, 10);
      expect(row.slice(9)).toEqual(['', '', '', '', '', '']);
      expect(run.stderr).toMatch(/no FEF25-75, FEF75 equations/);
    });
  },
);

describe('predict command', () => {
  it('computes the built-in ECSC/ERS 1993 values and leaves out-of-range rows empty', async () => {
    // Quanjer 1993: FEV1 (male) = 4.30 H - 0.029 A - 2.49 -> 3.875 L at 1.75 m, 40 y; LLN = 3.875 - 1.645 x 0.51 (RSD from memory).
    const run = await predict(['--equations', 'ecsc-1993'], 'sex,age,height_cm\nM,40,175\nF,75,160\n');
    expect(run.code).toBe(0);
    const [header, first, second] = table(run.stdout);
    expect(header).toHaveLength(15);
    expect(Number(first[0])).toBeCloseTo(3.875, 10);
    expect(Number(first[1])).toBeCloseTo(3.875 - 1.645 * 0.51, 10);
    expect(second).toEqual(Array(15).fill(''));
    expect(run.stderr).toMatch(/row 3: Age 75 y is outside the 18-70 y range/);
  });

  it('reports a bad row on stderr and exits non-zero', async () => {
    const run = await predict(['--equations', 'ecsc-1993'], 'sex,age,height_cm\nM,forty,175\n');
    expect(run.code).not.toBe(0);
    expect(run.stdout).toBe('');
    expect(run.stderr).toMatch(/Row 2: age "forty" is not a number/);
  });

  it('refuses an unknown equations id and a missing reference folder', async () => {
    const unknown = await predict(['--equations', 'gli-1999'], 'sex,age,height_cm\nM,40,175\n');
    expect(unknown.code).not.toBe(0);
    expect(unknown.stderr).toMatch(/--equations must be one of/);
    const noFolder = await predict(['--equations', 'gli-2012'], 'sex,age,height_cm,ethnicity\nM,40,175,caucasian\n');
    expect(noFolder.code).not.toBe(0);
    expect(noFolder.stderr).toMatch(/--reference-dir or set TIDEMARK_REFERENCE_DIR/);
  });
});
