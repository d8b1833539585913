import { afterAll, beforeAll, describe, expect, it } from '@jest/globals';
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { strToU8, zipSync } from 'fflate';
import { buildFhirBundle } from '../../shared/spirometry/fhir-bundle.js';
import { analyticFlowLPerS, analyticVolumeL, type AnalyticBlow } from '../../shared/spirometry/synthetic/analytic-curve.js';
import { recordingToSessionEffort, SESSION_DOCUMENT_FORMAT, type SessionDocument } from '../../shared/spirometry/session-document.js';
import { effortToCsv, generateSession, type GeneratedEffort } from '../../shared/spirometry/synthetic/curve-generator.js';

/**
 * The analytic test curve (our own construction from the ATS/ERS definitions): flow rises
 * linearly to PEF over riseS, then decays exponentially with time constant tauS.
 */
type AnalyticCurve = AnalyticBlow;

/** A CSV of the curve after a flat lead-in, ending at `endS` after the start of the blow. */
function analyticCsv(curve: AnalyticCurve, options: { rateHz?: number; signal?: 'volume' | 'flow'; leadInS?: number; endS?: number } = {}): string {
  const { rateHz = 100, signal = 'volume', leadInS = 0.5, endS = 12 } = options;
  const rows = [signal === 'volume' ? 'time_s,volume_l' : 'time_s,flow_l_s'];
  const count = Math.round((leadInS + endS) * rateHz);
  for (let i = 0; i <= count; i++) {
    const timeS = i / rateHz;
    const value = signal === 'volume' ? analyticVolumeL(curve, timeS - leadInS) : analyticFlowLPerS(curve, timeS - leadInS);
    rows.push(`${timeS.toFixed(6)},${value.toFixed(7)}`);
  }
  return rows.join('\n') + '\n';
}

/** Accuracy the engine must reach: ATS/ERS 2005 (Miller MR et al.), Table 6. */
function withinVolumeAccuracy(measuredL: number, expectedL: number): boolean {
  return Math.abs(measuredL - expectedL) <= Math.max(0.03 * expectedL, 0.05);
}

interface CliResult {
  readonly status: number | null;
  readonly stdout: string;
  readonly stderr: string;
}

function runAnalyze(args: string[], env: Record<string, string | undefined> = {}): CliResult {
  const mergedEnv = { ...process.env, ...env };
  for (const [key, value] of Object.entries(env)) if (value === undefined) delete mergedEnv[key];
  const result = spawnSync('npx', ['tsx', 'server/cli/analyze.ts', ...args], { cwd: process.cwd(), env: mergedEnv, encoding: 'utf8' });
  return { status: result.status, stdout: result.stdout, stderr: result.stderr };
}

interface EffortJson {
  file: string;
  timeZero: number;
  bev: number;
  fev1: number;
  fvc: number;
  fev6: number | null;
  pef: number;
  fef2575: number;
  fet: number;
  eofe: boolean;
  fev1Verdict: string;
  fvcVerdict: string;
  findings: string[];
}
interface PredictedJson {
  predicted: number | null;
  lln: number | null;
  uln: number | null;
  z: number | null;
  percentPredicted: number | null;
}
interface OutputJson {
  efforts: EffortJson[];
  session: {
    fev1Grade: string;
    fvcGrade: string;
    fev1: number | null;
    fvc: number | null;
    fev1FvcRatio: number | null;
    predicted: { fev1: PredictedJson; fvc: PredictedJson; fev1FvcRatio: PredictedJson } | null;
  };
}

function parseOutput(result: CliResult): OutputJson {
  if (result.status !== 0) throw new Error(`analyze failed (${result.status}): ${result.stderr}`);
  return JSON.parse(result.stdout) as OutputJson;
}

const referenceDir = process.env['TIDEMARK_TEST_REFERENCE_DIR'] ?? path.resolve(process.cwd(), '../shared/reference');
const hasReference = existsSync(referenceDir);
if (!hasReference) console.warn(`analyze CLI: reference data not found at ${referenceDir}; predicted-value checks are skipped`);
const withReference = hasReference ? describe : describe.skip;

/** A session document holding generated efforts, with demographics at test. */
function sessionDocument(efforts: readonly GeneratedEffort[]): SessionDocument {
  return {
    format: SESSION_DOCUMENT_FORMAT,
    metadata: { subjectCode: 'S-0001', visit: 'V2', bronchodilator: 'pre', demographics: { ageYears: 40, heightCm: 175, sex: 'male' } },
    efforts: efforts.map(({ recording }) => recordingToSessionEffort(recording)),
  };
}

// Closed form for PEF 8 L/s, tr 0.1 s, tau 0.6 s: FVC 5.200000, time zero 0.05 s, BEV 0.100000,
// FEV1 4.214610, FEV6 5.199763, FEF25-75 3.944370.
const REFERENCE_CURVE: AnalyticCurve = { pefLPerS: 8, riseS: 0.1, tauS: 0.6 };

describe('analyze command', () => {
  let dir: string;
  const file = (name: string, content: string | Uint8Array): string => {
    const full = path.join(dir, name);
    writeFileSync(full, content);
    return full;
  };

  beforeAll(() => {
    dir = mkdtempSync(path.join(os.tmpdir(), 'tidemark-analyze-'));
  });
  afterAll(() => {
    rmSync(dir, { recursive: true, force: true });
  });

  it('reports the closed-form analytic curve within ATS/ERS 2005 Table 6 accuracy', () => {
    const e1 = file('e1.csv', analyticCsv(REFERENCE_CURVE));
    const output = parseOutput(runAnalyze([e1]));
    expect(output.efforts).toHaveLength(1);
    const effort = output.efforts[0];
    expect(effort.file).toBe('e1.csv');
    // Time zero on the file's axis: 0.5 s lead-in + tr/2 = 0.55 s, and BEV = PEF tr/8 = 0.100 L (closed form of the
    // line through the point of peak flow with slope PEF, ATS/ERS 2019, from memory); a volume CSV's 10 ms chords put
    // time zero under 1 ms early.
    expect(Math.abs(effort.timeZero - 0.55)).toBeLessThanOrEqual(0.001);
    expect(Math.abs(effort.bev - 0.1)).toBeLessThanOrEqual(0.0025);
    // FET: from time zero to the first time the volume gained over the last second falls to 0.025 L (ATS/ERS 2019
    // plateau, from memory). Closed form: V(t) - V(t - 1) = PEF tau e^{-(t - tr)/tau} (e^{1/tau} - 1) = 0.025 L
    // gives t_e = tr + tau ln(PEF tau (e^{1/tau} - 1) / 0.025) = 4.129 s after the onset.
    const { pefLPerS: pef, riseS: tr, tauS: tau } = REFERENCE_CURVE;
    const endS = tr + tau * Math.log((pef * tau * (Math.exp(1 / tau) - 1)) / 0.025);
    expect(Math.abs(effort.fet - (endS - tr / 2))).toBeLessThanOrEqual(0.002);
    expect(withinVolumeAccuracy(effort.fvc, 5.2)).toBe(true);
    expect(withinVolumeAccuracy(effort.fev1, 4.21461)).toBe(true);
    expect(withinVolumeAccuracy(effort.fev6 as number, 5.199763)).toBe(true);
    // PEF within 10 % or 0.30 L/s; FEF25-75 within 5 % or 0.200 L/s (ATS/ERS 2005, Table 6).
    expect(Math.abs(effort.pef - 8)).toBeLessThanOrEqual(Math.max(0.8, 0.3));
    expect(Math.abs(effort.fef2575 - 3.94437)).toBeLessThanOrEqual(Math.max(0.05 * 3.94437, 0.2));
    expect(effort.eofe).toBe(true);
    expect(effort.fev1Verdict).toBe('acceptable');
    expect(effort.fvcVerdict).toBe('acceptable');
    expect(effort.findings).toEqual([]);
    // One acceptable value -> grade E (Graham BL et al. 2019, Table 10).
    expect(output.session.fev1Grade).toBe('E');
    expect(output.session.fvcGrade).toBe('E');
    expect(output.session.predicted).toBeNull();
  });

  it('grades three repeatable efforts A and reports the largest values (volume at 100 Hz, flow at 1000 Hz)', () => {
    // FVC = PEF (tr/2 + tau): 5.200, 5.135, 5.070 L -> 130 mL apart, within 0.150 L: grade A (Graham BL et al. 2019, Table 10).
    const files = [
      file('s1.csv', analyticCsv({ ...REFERENCE_CURVE, pefLPerS: 7.9 })),
      file('s2.csv', analyticCsv(REFERENCE_CURVE, { signal: 'flow', rateHz: 1000 })),
      file('s3.csv', analyticCsv({ ...REFERENCE_CURVE, pefLPerS: 7.8 })),
    ];
    const output = parseOutput(runAnalyze(files));
    expect(output.efforts.map((effort) => effort.file)).toEqual(['s1.csv', 's2.csv', 's3.csv']);
    expect(output.session.fev1Grade).toBe('A');
    expect(output.session.fvcGrade).toBe('A');
    // Largest acceptable values come from the PEF 8 effort (ATS/ERS 2019 reported values).
    expect(withinVolumeAccuracy(output.session.fvc as number, 5.2)).toBe(true);
    expect(withinVolumeAccuracy(output.session.fev1 as number, 4.21461)).toBe(true);
    expect(output.session.fev1FvcRatio as number).toBeCloseTo((output.session.fev1 as number) / (output.session.fvc as number), 12);
    // Closed form: FEV1/FVC = 4.214610 / 5.200000 = 0.810502.
    expect(Math.abs((output.session.fev1FvcRatio as number) - 0.810502)).toBeLessThan(0.01);
  });

  it('a truncated blow has no end of forced expiration: FVC at most usable', () => {
    // Truncated 2 s after the start: volume still rising by far more than 0.025 L in the last second (Graham BL et al. 2019, from memory).
    const truncated = file('cut.csv', analyticCsv({ ...REFERENCE_CURVE, tauS: 1.5 }, { endS: 2 }));
    const output = parseOutput(runAnalyze([truncated]));
    const effort = output.efforts[0];
    expect(effort.eofe).toBe(false);
    expect(effort.fvcVerdict).not.toBe('acceptable');
    expect(effort.fev1Verdict).toBe('acceptable');
  });

  it('reads a zip of CSVs in file-name order, with demographics from session.json', () => {
    const zip = zipSync({
      'b.csv': strToU8(analyticCsv({ ...REFERENCE_CURVE, pefLPerS: 7.9 })),
      'a.csv': strToU8(analyticCsv(REFERENCE_CURVE)),
      'session.json': strToU8(JSON.stringify({ demographics: { ageYears: 40, heightCm: 175, sex: 'male' } })),
    });
    const output = parseOutput(runAnalyze([file('session.zip', zip)], { TIDEMARK_REFERENCE_DIR: undefined }));
    expect(output.efforts.map((effort) => effort.file)).toEqual(['a.csv', 'b.csv']);
    // Without a reference folder the built-in ECSC/ERS 1993 equations apply: FEV1 male = 4.30 H(m) - 0.029 age - 2.49
    // (Quanjer PH et al. 1993, Eur Respir J 6 Suppl 16).
    const predicted = output.session.predicted;
    expect(predicted).not.toBeNull();
    expect(predicted?.fev1.predicted).toBeCloseTo(4.3 * 1.75 - 0.029 * 40 - 2.49, 6);
    expect(predicted?.fev1.percentPredicted).toBeCloseTo((100 * (output.session.fev1 as number)) / (predicted?.fev1.predicted as number), 6);
    for (const key of ['fev1', 'fvc', 'fev1FvcRatio'] as const) {
      expect(Object.keys(predicted?.[key] ?? {})).toEqual(expect.arrayContaining(['predicted', 'lln', 'uln', 'z', 'percentPredicted']));
    }
  });

  it('analyses generated efforts with tidal breathing written as CSVs, against the generator\'s exact values', () => {
    // Generated at 100 Hz with tidal breaths, full inspiration and a cough in the first second of effort 3.
    const efforts = generateSession(
      { efforts: 3, base: { sampleRateHz: 100, tidalBreaths: 2 }, perEffort: [undefined, undefined, { faults: ['cough-first-second'] }] },
      11,
    );
    const files = efforts.map(({ recording }) => file(recording.label, effortToCsv(recording)));
    const output = parseOutput(runAnalyze(files));
    output.efforts.forEach((effort, index) => {
      const truth = efforts[index].truth;
      // ATS/ERS 2005 (Miller MR et al.), Table 6: FVC and FEV1 within 3 % or 0.050 L.
      expect(withinVolumeAccuracy(effort.fvc, truth.fvcL)).toBe(true);
      expect(withinVolumeAccuracy(effort.fev1, truth.fev1L)).toBe(true);
    });
    // Table 7 (Graham BL et al. 2019, from memory): a cough in the first second rules out FEV1, not FVC.
    expect(output.efforts[2].findings).toContain('cough-first-second');
    expect(output.efforts[2].fev1Verdict).toBe('not_acceptable');
    expect(output.efforts[0].fev1Verdict).toBe('acceptable');
    expect(output.efforts[1].fev1Verdict).toBe('acceptable');
  });

  it('reads a Tidemark session JSON and the same session as a FHIR Bundle alike', () => {
    const document = sessionDocument(generateSession({ efforts: 3, base: { sampleRateHz: 200 } }, 5));
    const fromJson = parseOutput(runAnalyze([file('session.json', JSON.stringify(document))]));
    const fromFhir = parseOutput(runAnalyze([file('bundle.json', JSON.stringify(buildFhirBundle(document)))]));
    expect(fromJson.efforts.map((effort) => effort.file)).toEqual(['effort-1.csv', 'effort-2.csv', 'effort-3.csv']);
    expect(fromFhir.efforts).toHaveLength(3);
    expect(fromFhir.session.fev1Grade).toBe(fromJson.session.fev1Grade);
    // The FHIR waveform carries the samples with a scale factor: equal to 1 mL (common practice).
    expect(Math.abs((fromFhir.session.fvc as number) - (fromJson.session.fvc as number))).toBeLessThan(0.001);
    // Demographics come from the session's metadata; no reference folder -> ECSC/ERS 1993 (Quanjer PH et al. 1993):
    // FVC male = 5.76 H(m) - 0.026 age - 4.34.
    const noReference = parseOutput(runAnalyze([file('session2.json', JSON.stringify(document))], { TIDEMARK_REFERENCE_DIR: undefined }));
    expect(noReference.session.predicted?.fvc.predicted).toBeCloseTo(5.76 * 1.75 - 0.026 * 40 - 4.34, 6);
  });

  it('refuses a session JSON of an unknown format, naming the field', () => {
    const result = runAnalyze([file('odd.json', JSON.stringify({ format: 'other/9', efforts: [] }))]);
    expect(result.status).toBe(1);
    expect(result.stdout).toBe('');
    expect(result.stderr).toMatch(/odd\.json: format is "other\/9"/);
  });

  it('refuses effort CSVs mixed with a session file', () => {
    const result = runAnalyze([file('m1.csv', analyticCsv(REFERENCE_CURVE)), file('m2.json', '{}')]);
    expect(result.status).toBe(2);
    expect(result.stdout).toBe('');
  });

  it('refuses a zip entry with a path outside the archive', () => {
    const zip = zipSync({ 'a.csv': strToU8(analyticCsv(REFERENCE_CURVE)), '../escape.csv': strToU8(analyticCsv(REFERENCE_CURVE)) });
    const result = runAnalyze([file('escape.zip', zip)]);
    expect(result.status).not.toBe(0);
    expect(result.stdout).toBe('');
    expect(result.stderr).toMatch(/"\.\.\/escape\.csv" points outside the archive/);
  });

  it('refuses a bad header with one line naming the row and column, and prints nothing on stdout', () => {
    const bad = file('bad-header.csv', 'time,volume\n0,0\n0.01,0.1\n');
    const result = runAnalyze([bad]);
    expect(result.status).not.toBe(0);
    expect(result.stdout).toBe('');
    expect(result.stderr.trim().split('\n')).toHaveLength(1);
    expect(result.stderr).toMatch(/bad-header\.csv/);
    expect(result.stderr).toMatch(/header/i);
    expect(result.stderr).toMatch(/row 1/);
  });

  it('refuses a non-numeric cell, naming its row and column', () => {
    const lines = analyticCsv(REFERENCE_CURVE).split('\n');
    lines[5] = '0.04,abc';
    const result = runAnalyze([file('bad-cell.csv', lines.join('\n'))]);
    expect(result.status).not.toBe(0);
    expect(result.stdout).toBe('');
    expect(result.stderr).toMatch(/bad-cell\.csv/);
    expect(result.stderr).toMatch(/6/);
    expect(result.stderr).toMatch(/volume_l/);
  });

  it('refuses an unknown option and incomplete demographics as command-line errors', () => {
    const e1 = file('opt.csv', analyticCsv(REFERENCE_CURVE));
    const unknown = runAnalyze(['--colour', 'red', e1]);
    expect(unknown.status).toBe(2);
    expect(unknown.stdout).toBe('');
    const partial = runAnalyze(['--height-cm', '170', e1]);
    expect(partial.status).toBe(2);
    expect(partial.stderr).toMatch(/--age, --height-cm and --sex/);
  });

  it('refuses an unknown protocol', () => {
    const result = runAnalyze(['--protocol', 'no-such-set', file('p.csv', analyticCsv(REFERENCE_CURVE))]);
    expect(result.status).toBe(1);
    expect(result.stderr).toMatch(/unknown protocol "no-such-set"/);
  });

  withReference('with reference data', () => {
    it('gives GLI Global 2022 predicted values matching the cross-check values', () => {
      // Bowerman C et al. 2023 (GLI Global), cross-check row: male, 25 y, 155 cm -> FEV1 predicted 3.10099174918164,
      // LLN 2.42608536843794; FVC predicted 3.52766028759656 (shared/reference/gli-global-2022/cross-check-values.csv).
      const e1 = file('g1.csv', analyticCsv(REFERENCE_CURVE));
      const output = parseOutput(
        runAnalyze(['--age', '25', '--height-cm', '155', '--sex', 'male', '--equations', 'gli-global-2022', '--reference-dir', referenceDir, e1]),
      );
      const predicted = output.session.predicted;
      expect(predicted?.fev1.predicted).toBeCloseTo(3.10099174918164, 3);
      expect(predicted?.fev1.lln).toBeCloseTo(2.42608536843794, 3);
      expect(predicted?.fvc.predicted).toBeCloseTo(3.52766028759656, 3);
      expect(predicted?.fev1FvcRatio.predicted).toBeCloseTo(0.874014018781359, 3);
      expect(predicted?.fev1.percentPredicted).toBeCloseTo((100 * (output.session.fev1 as number)) / 3.10099174918164, 1);
    });

    it('defaults to GLI Global 2022 when the reference folder is available', () => {
      const e1 = file('g2.csv', analyticCsv(REFERENCE_CURVE));
      const output = parseOutput(runAnalyze(['--age', '25', '--height-cm', '155', '--sex', 'female', e1], { TIDEMARK_REFERENCE_DIR: referenceDir }));
      // Cross-check row: female, 25 y, 155 cm -> FEV1 predicted 2.75449431443638 (same file as above).
      expect(output.session.predicted?.fev1.predicted).toBeCloseTo(2.75449431443638, 3);
    });
  });
});
