import { describe, expect, it } from '@jest/globals';
import { DEFAULT_ENGINE_PARAMETERS, analyzeRecording } from './effort-analysis.js';
import type { EffortMetrics, EngineParameters, Recording, SignalKind } from './model.js';
import { type AnalyticBlow, analyticPlateauTimeS, analyticVolumeL, recordAnalyticBlow } from './synthetic/analytic-curve.js';

/**
 * Our analytic test curve (a construction from the ATS/ERS definitions, exact values derived
 * from its closed form; see synthetic/analytic-curve.ts): flow rises linearly to PEF over tr,
 * then decays exponentially with tau.
 */
interface AnalyticCurve extends AnalyticBlow {
  readonly name: string;
}

const volumeAt = analyticVolumeL;

/** Closed forms of the analytic curve: FVC = PEF (tr/2 + tau), t0 = tr/2, BEV = PEF tr/8, FEF at x = (1 - x) FVC/tau, FEF25-75 = 0.5 FVC/(tau ln 3). */
function expectedFor(c: AnalyticCurve) {
  const fvcL = c.pefLPerS * (c.riseS / 2 + c.tauS);
  const timeZeroS = c.riseS / 2;
  return {
    fvcL,
    timeZeroS,
    bevL: (c.pefLPerS * c.riseS) / 8,
    fev1L: volumeAt(c, timeZeroS + 1),
    fev6L: volumeAt(c, timeZeroS + 6),
    pefLPerS: c.pefLPerS,
    fef25LPerS: (0.75 * fvcL) / c.tauS,
    fef50LPerS: (0.5 * fvcL) / c.tauS,
    fef75LPerS: (0.25 * fvcL) / c.tauS,
    fef2575LPerS: (0.5 * fvcL) / (c.tauS * Math.log(3)),
  };
}

const REFERENCE_CURVE: AnalyticCurve = { name: 'reference curve (PEF 8, tr 0.1, tau 0.6)', pefLPerS: 8, riseS: 0.1, tauS: 0.6 };
const CURVES: AnalyticCurve[] = [
  REFERENCE_CURVE,
  { name: 'own: slow emptying (PEF 4, tr 0.15, tau 1.0)', pefLPerS: 4, riseS: 0.15, tauS: 1.0 },
  { name: 'own: small fast lung (PEF 3, tr 0.06, tau 0.35)', pefLPerS: 3, riseS: 0.06, tauS: 0.35 },
  { name: 'own: strong young adult (PEF 11, tr 0.08, tau 0.45)', pefLPerS: 11, riseS: 0.08, tauS: 0.45 },
];

/** Samples the curve after a flat lead-in, for 15 s after the onset (a flat tail in practice). */
function sampleCurve(c: AnalyticCurve, rateHz: number, signal: SignalKind, leadInS: number): Recording {
  return recordAnalyticBlow(c, { rateHz, signal, leadInS, durationS: 15, label: `${c.name} ${rateHz} Hz ${signal}` });
}

// ATS/ERS 2005 (Miller MR et al. 2005), Table 6 [verified]:
// FVC and FEV1 within 3 % of reading or 0.050 L, PEF 10 % or 0.30 L/s, FEF25-75 5 % or 0.200 L/s.
const volumeTolerance = (x: number) => Math.max(0.03 * x, 0.05);
const pefTolerance = (x: number) => Math.max(0.1 * x, 0.3);
const fef2575Tolerance = (x: number) => Math.max(0.05 * x, 0.2);

function expectWithin(actual: number | null, expected: number, tolerance: number, what: string): void {
  if (actual === null) throw new Error(`${what} is null, expected ${expected}`);
  if (Math.abs(actual - expected) > tolerance) {
    throw new Error(`${what}: ${actual.toFixed(6)} differs from ${expected.toFixed(6)} by more than ${tolerance.toFixed(6)}`);
  }
}

function checkAccuracy(m: EffortMetrics, c: AnalyticCurve, leadInS: number, scale: number): void {
  const e = expectedFor(c);
  expectWithin(m.fvcL, e.fvcL, volumeTolerance(e.fvcL) * scale, 'FVC');
  expectWithin(m.fev1L, e.fev1L, volumeTolerance(e.fev1L) * scale, 'FEV1');
  expectWithin(m.fef2575LPerS, e.fef2575LPerS, fef2575Tolerance(e.fef2575LPerS) * scale, 'FEF25-75');
  // FEF25/50/75 have no Table 6 line; held to the FEF25-75 accuracy.
  expectWithin(m.fef25LPerS, e.fef25LPerS, fef2575Tolerance(e.fef25LPerS) * scale, 'FEF25');
  expectWithin(m.fef50LPerS, e.fef50LPerS, fef2575Tolerance(e.fef50LPerS) * scale, 'FEF50');
  expectWithin(m.fef75LPerS, e.fef75LPerS, fef2575Tolerance(e.fef75LPerS) * scale, 'FEF75');
  expectWithin(m.fev6L, e.fev6L, volumeTolerance(e.fev6L) * scale, 'FEV6');
  expect(m.timeZeroS).toBeGreaterThan(leadInS);
}

describe('effort metrics on the analytic curves (exact values from the closed form; accuracy ATS/ERS 2005 Table 6)', () => {
  it('the closed forms give the reference curve\'s exact values', () => {
    // Our analytic curve PEF 8 L/s, tr 0.1 s, tau 0.6 s, solved by hand: FVC 5.200000, time zero 0.05, BEV 0.100000,
    // FEV1 4.214610, FEV6 5.199763, FEF25 6.5, FEF50 4.333333, FEF75 2.166667, FEF25-75 3.944370.
    const e = expectedFor(REFERENCE_CURVE);
    expect(e.fvcL).toBeCloseTo(5.2, 6);
    expect(e.timeZeroS).toBeCloseTo(0.05, 6);
    expect(e.bevL).toBeCloseTo(0.1, 6);
    expect(e.fev1L).toBeCloseTo(4.21461, 5);
    expect(e.fev6L).toBeCloseTo(5.199763, 6);
    expect(e.fef25LPerS).toBeCloseTo(6.5, 6);
    expect(e.fef50LPerS).toBeCloseTo(4.333333, 6);
    expect(e.fef75LPerS).toBeCloseTo(2.166667, 6);
    expect(e.fef2575LPerS).toBeCloseTo(3.94437, 5);
  });

  const grid: [AnalyticCurve, number, SignalKind][] = [];
  for (const c of CURVES) for (const rate of [100, 1000]) for (const signal of ['volume', 'flow'] as const) grid.push([c, rate, signal]);

  it.each(grid)('%s at %i Hz from %s: within Table 6 and within a tenth of it (onset on a sample)', (c, rate, signal) => {
    const leadInS = 0.5;
    const { metrics, findings } = analyzeRecording(sampleCurve(c, rate, signal, leadInS), DEFAULT_ENGINE_PARAMETERS);
    checkAccuracy(metrics, c, leadInS, 1);
    checkAccuracy(metrics, c, leadInS, 0.1);
    const e = expectedFor(c);
    // A volume signal holds only mean flows over sample intervals; at these kinked peaks the
    // best 10 ms mean is up to ~1.3 % below PEF. The tenth is reached from flow input, and
    // from volume input on the reference curve; all stay well within Table 6.
    const pefScale = signal === 'flow' || c === REFERENCE_CURVE ? 0.1 : 1;
    expectWithin(metrics.pefLPerS, e.pefLPerS, pefTolerance(e.pefLPerS) * pefScale, 'PEF');
    // A clean curve with a flat tail: no finding (common practice: no false alarms for the reader).
    expect(findings.map((f) => f.code)).toEqual([]);
    expect(metrics.endOfTest.plateau).toBe(true);
    // FET: time zero tr/2 to the first time the volume gained over the last second is 0.025 L
    // (ATS/ERS 2019 plateau, from memory), t_e = tr + tau ln(PEF tau (e^{1/tau} - 1) / 0.025) by the
    // closed form (synthetic/analytic-curve.ts); time zero adds up to 1 ms of error, interpolation less.
    const endS = analyticPlateauTimeS(c, 1, 0.025);
    if (endS === null) throw new Error('the plateau point must lie on the exponential part');
    expectWithin(metrics.fetS, endS - e.timeZeroS, 0.002, 'FET');
  });

  it.each(grid)('%s at %i Hz from %s: within Table 6 with the onset between samples', (c, rate, signal) => {
    // A lead-in of 0.5037 s puts the sharp peak between samples: at 100 Hz a flow sample can
    // miss the kinked peak by up to ~1.5 % (sampling limit), still well inside Table 6.
    const leadInS = 0.5037;
    const { metrics } = analyzeRecording(sampleCurve(c, rate, signal, leadInS), DEFAULT_ENGINE_PARAMETERS);
    checkAccuracy(metrics, c, leadInS, 1);
    const e = expectedFor(c);
    expectWithin(metrics.pefLPerS, e.pefLPerS, pefTolerance(e.pefLPerS), 'PEF');
    expectWithin(metrics.fvcL, e.fvcL, volumeTolerance(e.fvcL) * 0.1, 'FVC (tenth)');
    expectWithin(metrics.fev1L, e.fev1L, volumeTolerance(e.fev1L) * 0.1, 'FEV1 (tenth)');
  });

  it('FEV6 is null when the subject breathes in before 6 s (FEV6 only if the blow lasts 6 s; ATS/ERS 2019, from memory)', () => {
    const rate = 100;
    const base = sampleCurve(REFERENCE_CURVE, rate, 'flow', 0.5);
    const values = Float64Array.from(base.values);
    // Breathe in 3 L at 2 L/s from 4 s after onset.
    for (let i = Math.round(4.5 * rate); i < Math.round(6 * rate); i++) values[i] = -2;
    const { metrics } = analyzeRecording({ ...base, values }, DEFAULT_ENGINE_PARAMETERS);
    expect(metrics.fev6L).toBeNull();
    expect(metrics.fivcL).not.toBeNull();
    expectWithin(metrics.fev1L, expectedFor(REFERENCE_CURVE).fev1L, volumeTolerance(4.2), 'FEV1');
  });

  it('hesitation time is from maximal inspiration (start of the flat lead-in) to time zero', () => {
    const { metrics } = analyzeRecording(sampleCurve(REFERENCE_CURVE, 1000, 'volume', 0.5), DEFAULT_ENGINE_PARAMETERS);
    // Lead-in 0.5 s + time zero tr/2 = 0.05 s by the closed form; a volume signal's 10 ms chords put it under 1 ms early.
    expectWithin(metrics.hesitationTimeS, 0.55, 0.001, 'hesitation time');
    // The peak sample of volume-derived flow (central differences over +/- 5 ms) may sit a few ms late.
    expectWithin(metrics.timeToPefS, 0.05, 0.01, 'time to PEF');
  });
});

describe('time zero and BEV on the analytic curve PEF 8 L/s, tr 0.1 s, tau 0.6 s', () => {
  /** Chord of the steepest window of width w, from the formula: the continuous optimum found by a fine search. */
  function chordTimeZero(c: AnalyticCurve, windowS: number): { timeZeroS: number; bevL: number } {
    let best = { slope: -Infinity, a: 0 };
    for (let a = c.riseS - windowS; a <= c.riseS; a += 1e-6) {
      const slope = (volumeAt(c, a + windowS) - volumeAt(c, a)) / windowS;
      if (slope > best.slope) best = { slope, a };
    }
    const timeZeroS = best.a - volumeAt(c, best.a) / best.slope;
    return { timeZeroS, bevL: volumeAt(c, timeZeroS) };
  }

  const settings = [
    [100, 'volume'],
    [100, 'flow'],
    [1000, 'volume'],
    [1000, 'flow'],
  ] as const;
  const onsets: [number, string][] = [
    [0.5, 'onset on a sample'],
    [0.5037, 'onset between samples'],
    [0.5051, 'onset between samples'],
  ];
  const defaultCases: [number, SignalKind, number, string][] = [];
  for (const [rate, signal] of settings) for (const [leadInS, where] of onsets) defaultCases.push([rate, signal, leadInS, where]);

  it.each(defaultCases)(
    'default rule (ATS/ERS 2019, line through the point of peak flow with slope PEF) at %i Hz from %s, lead-in %f s (%s): t0 0.05 s, BEV 0.100 L',
    (rate, signal, leadInS) => {
      // ATS/ERS 2019 (Graham 2019; from memory of the 2019 text): back-extrapolation is the line through the
      // point of peak flow with slope equal to peak flow. On this curve, closed form: t0 = tr/2 = 0.05 s,
      // BEV = PEF tr/8 = 0.100000 L. A volume signal only holds mean slopes over 10 ms chords (0.7 % below
      // the kinked peak), and sampling puts the peak up to half a sample off: within 1 ms and 2.5 mL.
      expect(DEFAULT_ENGINE_PARAMETERS.backExtrapolationWindowS).toBe(0);
      const { metrics } = analyzeRecording(sampleCurve(REFERENCE_CURVE, rate, signal, leadInS), DEFAULT_ENGINE_PARAMETERS);
      expectWithin(metrics.timeZeroS - leadInS, 0.05, 0.001, 'time zero');
      expectWithin(metrics.bevL, 0.1, 0.0025, 'BEV');
    },
  );

  it.each([100, 1000])('default rule from a flow signal with the peak on a sample at %i Hz: exact (trapezoids are exact on a linear rise)', (rate) => {
    const { metrics } = analyzeRecording(sampleCurve(REFERENCE_CURVE, rate, 'flow', 0.5), DEFAULT_ENGINE_PARAMETERS);
    expectWithin(metrics.timeZeroS - 0.5, 0.05, 1e-9, 'time zero');
    expectWithin(metrics.bevL, 0.1, 1e-9, 'BEV');
  });

  it.each(settings)('window of one sample at %i Hz (%s): the same line within half a sample', (rate, signal) => {
    const params: EngineParameters = { ...DEFAULT_ENGINE_PARAMETERS, backExtrapolationWindowS: 1 / rate };
    const { metrics } = analyzeRecording(sampleCurve(REFERENCE_CURVE, rate, signal, 0.5), params);
    // Closed form t0 = tr/2 = 0.05 s, BEV = PEF tr/8 = 0.100 L; sampling limits the match to about half a sample.
    expectWithin(metrics.timeZeroS - 0.5, 0.05, 0.6 / rate, 'time zero');
    expectWithin(metrics.bevL, 0.1, 0.005, 'BEV');
  });

  it.each([
    [100, 'volume'],
    [1000, 'flow'],
  ] as const)('80 ms window option (ATS/ERS 2005 practice, from memory) at %i Hz (%s): the chord of the steepest 80 ms, as derived from the formula', (rate, signal) => {
    const params: EngineParameters = { ...DEFAULT_ENGINE_PARAMETERS, backExtrapolationWindowS: 0.08 };
    const { metrics } = analyzeRecording(sampleCurve(REFERENCE_CURVE, rate, signal, 0.5), params);
    const chord = chordTimeZero(REFERENCE_CURVE, 0.08);
    expectWithin(metrics.timeZeroS - 0.5, chord.timeZeroS, 0.0005, 'time zero vs 80 ms chord');
    expectWithin(metrics.bevL, chord.bevL, 0.002, 'BEV vs 80 ms chord');
    // The cost of the window on this sharp peak (time-zero.ts): time zero 2.9 ms early and BEV 0.011 L low
    // (0.0471 s and 0.0887 L by the formula) instead of 0.05 s and 0.100 L.
    expectWithin(chord.timeZeroS, 0.0471, 0.0001, 'formula: 80 ms chord time zero');
    expectWithin(chord.bevL, 0.0887, 0.0001, 'formula: 80 ms chord BEV');
  });
});
