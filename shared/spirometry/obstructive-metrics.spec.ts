import { describe, expect, it } from '@jest/globals';
import { DEFAULT_ENGINE_PARAMETERS, analyzeRecording } from './effort-analysis.js';
import type { EffortMetrics, SignalKind } from './model.js';
import { recordAnalyticBlow, recordClosedFormCurve } from './synthetic/analytic-curve.js';
import { type TwoCompartmentBlow, twoCompartmentCurve, twoCompartmentValues, twoCompartmentVolumeL } from './synthetic/analytic-two-compartment.js';

/**
 * Obstructive analytic test curves: linear rise of flow to PEF over tr, then two-compartment
 * emptying (a fast and a slow exponential). Exact values from the closed form derived in
 * synthetic/analytic-two-compartment.ts (our construction from the ATS/ERS definitions, as
 * engine.md section 9 does for one exponential): time zero tr/2, BEV PEF tr/8, FEVt = V(tr/2 + t),
 * FVC = V(end of expiration), FEF and the plateau time as roots of monotone closed forms.
 */
interface ObstructiveCase {
  readonly name: string;
  readonly blow: TwoCompartmentBlow;
  /** The subject stops exhaling and stays on the mouthpiece from here (s after the onset); null: exhales until the recording ends. */
  readonly holdFromS: number | null;
  readonly durationS: number;
}

const CASES: ObstructiveCase[] = [
  // FEV1/FVC 0.56, plateau 11.1 s after time zero (hand check below).
  { name: 'moderate COPD (PEF 4.5, tr 0.08, tau 0.3 / 3.5 s, slow share 0.6)', blow: { pefLPerS: 4.5, riseS: 0.08, fastTauS: 0.3, slowTauS: 3.5, slowShare: 0.6 }, holdFromS: 14, durationS: 17 },
  // An older subject's slower rise: FEV1/FVC 0.62, plateau 9.2 s after time zero.
  { name: 'older, slower rise (PEF 3.5, tr 0.2, tau 0.35 / 3 s, slow share 0.55)', blow: { pefLPerS: 3.5, riseS: 0.2, fastTauS: 0.35, slowTauS: 3, slowShare: 0.55 }, holdFromS: 13, durationS: 16 },
  // FEV1/FVC 0.66, plateau 8.9 s after time zero.
  { name: 'higher PEF (PEF 6, tr 0.06, tau 0.25 / 2.8 s, slow share 0.5)', blow: { pefLPerS: 6, riseS: 0.06, fastTauS: 0.25, slowTauS: 2.8, slowShare: 0.5 }, holdFromS: 12, durationS: 15 },
  // FEV1/FVC 0.49; still gaining more than 0.025 L a second 15 s after time zero (the closed-form
  // plateau would come at 15.6 s): only the FET criterion (15 s or more) ends it.
  { name: 'no plateau within 15 s (PEF 3, tr 0.12, tau 0.45 / 6 s, slow share 0.6)', blow: { pefLPerS: 3, riseS: 0.12, fastTauS: 0.45, slowTauS: 6, slowShare: 0.6 }, holdFromS: null, durationS: 17 },
];

// ATS/ERS 2005 (Miller MR et al. 2005), Table 6 [verified]: FVC and FEV1 (and so FEV6) within 3 % of
// reading or 0.050 L, PEF 10 % or 0.30 L/s, FEF25-75 5 % or 0.200 L/s, whichever is greater.
const volumeTolerance = (x: number): number => Math.max(0.03 * x, 0.05);
const pefTolerance = (x: number): number => Math.max(0.1 * x, 0.3);
const fefTolerance = (x: number): number => Math.max(0.05 * x, 0.2);

function check(actual: number | null, expected: number, tolerance: number, what: string, failures: string[]): void {
  if (actual === null || !(Math.abs(actual - expected) <= tolerance)) {
    failures.push(`${what}: ${actual === null ? 'null' : actual.toFixed(5)} vs ${expected.toFixed(5)} (tolerance ${tolerance.toFixed(5)})`);
  }
}

function expectAccurate(m: EffortMetrics, c: ObstructiveCase, leadInS: number, scale: number, pefScale: number): void {
  const e = twoCompartmentValues(c.blow, c.holdFromS ?? c.durationS);
  const failures: string[] = [];
  check(m.fvcL, e.fvcL, volumeTolerance(e.fvcL) * scale, 'FVC', failures);
  check(m.fev1L, e.fev1L, volumeTolerance(e.fev1L) * scale, 'FEV1', failures);
  check(m.fev6L, e.fev6L as number, volumeTolerance(e.fev6L as number) * scale, 'FEV6', failures);
  check(m.pefLPerS, e.pefLPerS, pefTolerance(e.pefLPerS) * pefScale, 'PEF', failures);
  check(m.fef2575LPerS, e.fef2575LPerS, fefTolerance(e.fef2575LPerS) * scale, 'FEF25-75', failures);
  // FEF25/50/75 have no Table 6 line; held to the FEF25-75 accuracy.
  check(m.fef25LPerS, e.fef25LPerS, fefTolerance(e.fef25LPerS) * scale, 'FEF25', failures);
  check(m.fef50LPerS, e.fef50LPerS, fefTolerance(e.fef50LPerS) * scale, 'FEF50', failures);
  check(m.fef75LPerS, e.fef75LPerS, fefTolerance(e.fef75LPerS) * scale, 'FEF75', failures);
  // FEV1/FVC has no line of its own: with both within a tenth of Table 6 it is within 0.003 here (our bound).
  if (m.fev1L !== null) check(m.fev1L / m.fvcL, e.fev1FvcRatio, 0.03 * scale, 'FEV1/FVC', failures);
  // Time zero and BEV: the line through the point of peak flow with slope PEF (ATS/ERS 2019, from memory);
  // a volume signal holds only 10 ms mean slopes and sampling puts the peak up to half a sample off.
  check(m.timeZeroS - leadInS, e.timeZeroS, 0.002, 'time zero', failures);
  check(m.bevL, e.bevL, 0.003, 'BEV', failures);
  expect(failures).toEqual([]);
}

describe('metrics on obstructive analytic curves (closed form; accuracy ATS/ERS 2005 Table 6, aiming at a tenth of it)', () => {
  it('the closed form gives the moderate curve an obstructive pattern: FEV1/FVC 0.56, plateau 11.1 s after time zero', () => {
    // Hand check of the closed form, PEF 4.5, tr 0.08, tau_f 0.3, tau_s 3.5, s 0.6:
    // R = 4.5 / (0.4/0.3 + 0.6/3.5) = 2.99051 L; V(1.04) = 0.18 + 0.4 R (1 - e^-3.2) + 0.6 R (1 - e^(-0.96/3.5)) = 1.75787 L;
    // V(14) = 0.18 + 0.4 R (1 - e^(-13.92/0.3)) + 0.6 R (1 - e^(-13.92/3.5)) = 3.13688 L.
    const c = CASES[0];
    const e = twoCompartmentValues(c.blow, 14);
    expect(e.fev1L).toBeCloseTo(1.75787, 5);
    expect(e.fvcL).toBeCloseTo(3.13688, 5);
    expect(e.fev1FvcRatio).toBeCloseTo(0.56039, 5);
    expect(e.timeZeroS).toBe(0.04);
    expect(e.bevL).toBeCloseTo(0.045, 9);
    // Plateau: G = 0.6 R e^(-x/3.5) (e^(1/3.5) - 1) + (fast term, under 1e-14 L by then) = 0.025 L
    // => x = 3.5 ln(0.6 R (e^(1/3.5) - 1) / 0.025) = 11.0846 s, t = tr + x = 11.1646 s.
    expect(e.plateauTimeS).toBeCloseTo(11.1646, 3);
  });

  const grid: [string, ObstructiveCase, number, SignalKind, number][] = [];
  for (const c of CASES)
    for (const rate of [100, 1000])
      for (const signal of ['volume', 'flow'] as const) for (const leadInS of [0.5, 0.5037]) grid.push([c.name, c, rate, signal, leadInS]);

  it.each(grid)('%s at %i Hz from %s, lead-in %f s', (_name, c, rate, signal, leadInS) => {
    const recording = recordClosedFormCurve(twoCompartmentCurve(c.blow), {
      rateHz: rate,
      signal,
      leadInS,
      durationS: c.durationS,
      ...(c.holdFromS === null ? {} : { holdFromS: c.holdFromS }),
    });
    const { metrics, findings } = analyzeRecording(recording, DEFAULT_ENGINE_PARAMETERS);
    // A volume signal holds only mean flows over sample intervals: at these kinked peaks its best
    // 10 ms mean is 0.7-1.9 % below PEF (within Table 6; a tenth of it only from flow input). A
    // flow sample between samples misses a kinked peak by up to 2.4 % at 100 Hz (sampling limit).
    const pefScale = signal === 'flow' && (rate === 1000 || leadInS === 0.5) ? 0.1 : 1;
    expectAccurate(metrics, c, leadInS, 0.1, pefScale);
    expect(findings.map((finding) => finding.message)).toEqual([]);
    const e = twoCompartmentValues(c.blow, c.holdFromS ?? c.durationS);
    if (e.plateauTimeS !== null) {
      // FET: time zero to the plateau point (0.025 L over the last 1 s, ATS/ERS 2019, from memory), closed form.
      expect(metrics.endOfTest.plateau).toBe(true);
      expect(Math.abs(metrics.fetS - (e.plateauTimeS - e.timeZeroS))).toBeLessThan(0.003);
    } else {
      // No plateau: the FET criterion (15 s or more; ATS/ERS 2019, from memory) ends the expiration.
      expect(metrics.endOfTest.plateau).toBe(false);
      expect(metrics.endOfTest.longExpiration).toBe(true);
      expect(metrics.fetS).toBeGreaterThanOrEqual(15);
    }
    expect(metrics.endOfTest.met).toBe(true);
  });
});

describe('FEV6 (ATS/ERS: only when the expiration lasted 6 s; our reading, documented in model.ts)', () => {
  const c = CASES[0];
  const curve = twoCompartmentCurve(c.blow);
  const t0 = c.blow.riseS / 2;

  it.each([100, 1000])('a COPD blow cut off at 5 s (recording ends) has no FEV6, at %i Hz', (rate) => {
    const recording = recordClosedFormCurve(curve, { rateHz: rate, signal: 'flow', leadInS: 0.5, durationS: 5 });
    const { metrics, findings } = analyzeRecording(recording, DEFAULT_ENGINE_PARAMETERS);
    expect(metrics.fev6L).toBeNull();
    // Still exhaling 0.3 L/s: no plateau, FET under 15 s (ATS/ERS 2019, from memory).
    expect(findings.map((finding) => finding.code)).toEqual(['end-early']);
  });

  it.each([100, 1000])('a COPD blow ended by a breath in at 5 s has no FEV6, at %i Hz', (rate) => {
    const recording = recordClosedFormCurve(curve, { rateHz: rate, signal: 'volume', leadInS: 0.5, durationS: 8, breathInFromS: 5, breathInLPerS: 2, breathInS: 1.5 });
    const { metrics } = analyzeRecording(recording, DEFAULT_ENGINE_PARAMETERS);
    expect(metrics.fev6L).toBeNull();
    expect(metrics.fivcL).not.toBeNull();
  });

  it('a blow lasting past 6 s has FEV6 = V(t0 + 6) of the closed form', () => {
    const recording = recordClosedFormCurve(curve, { rateHz: 100, signal: 'volume', leadInS: 0.5, durationS: 7.5 });
    const { metrics } = analyzeRecording(recording, DEFAULT_ENGINE_PARAMETERS);
    const expected = twoCompartmentVolumeL(c.blow, t0 + 6);
    // Table 6 accuracy (3 % or 0.050 L; Miller 2005), held to a tenth.
    expect(Math.abs((metrics.fev6L as number) - expected)).toBeLessThan(0.1 * volumeTolerance(expected));
  });

  it('a subject who reached a plateau at 4 s and stayed on the mouthpiece without breathing in has FEV6 = the volume held', () => {
    // Healthy analytic curve PEF 8, tr 0.1, tau 0.5 (engine.md section 9 form): plateau where
    // PEF tau e^{-(t - tr)/tau} (e^{1/tau} - 1) = 0.025, t = 0.1 + 0.5 ln(8 0.5 (e^2 - 1)/0.025) = 3.80 s.
    // Exhales until 4.5 s, then holds still to 8 s: the expiration (no breath in) lasts past 6 s.
    const recording = recordAnalyticBlow({ pefLPerS: 8, riseS: 0.1, tauS: 0.5 }, { rateHz: 100, signal: 'flow', leadInS: 0.5, durationS: 8, holdFromS: 4.5 });
    const { metrics } = analyzeRecording(recording, DEFAULT_ENGINE_PARAMETERS);
    expect(metrics.fetS).toBeLessThan(4);
    expect(metrics.endOfTest.plateau).toBe(true);
    expect(Math.abs((metrics.fev6L as number) - metrics.fvcL)).toBeLessThan(0.001);
  });
});

describe('time to PEF on a slower rise (peak-late threshold 0.15 s, common practice)', () => {
  it.each([
    [0.2, 100, 'flow'],
    [0.25, 100, 'volume'],
    [0.25, 1000, 'flow'],
  ] as const)('rise %f s at %i Hz from %s: time to PEF is tr/2 from the closed form, and not late', (riseS, rate, signal) => {
    // The line through the peak (tr, PEF tr/2) with slope PEF meets V = 0 at tr/2, so the peak
    // comes tr/2 after time zero: 0.10-0.125 s, under the 0.15 s of common practice. A slow rise
    // to a low peak (an older COPD subject) is not a late peak. BEV = PEF tr/8 = 0.088-0.109 L stays
    // under its limit here (the greater of 0.100 L and 5 % of FVC 2.7-2.8 L; ATS/ERS 2019, from memory).
    const blow: TwoCompartmentBlow = { pefLPerS: 3.5, riseS, fastTauS: 0.35, slowTauS: 3, slowShare: 0.55 };
    const recording = recordClosedFormCurve(twoCompartmentCurve(blow), { rateHz: rate, signal, leadInS: 0.5, durationS: 16, holdFromS: 13 });
    const { metrics, findings } = analyzeRecording(recording, DEFAULT_ENGINE_PARAMETERS);
    expect(Math.abs(metrics.timeToPefS - riseS / 2)).toBeLessThan(0.011);
    expect(findings.map((finding) => finding.code)).toEqual([]);
  });

  it('a flow that is still climbing 0.2 s after time zero is late', () => {
    // Rise over 0.5 s: time to PEF tr/2 = 0.25 s > 0.15 s (common practice); BEV PEF tr/8 = 0.19 L.
    const blow: TwoCompartmentBlow = { pefLPerS: 3, riseS: 0.5, fastTauS: 0.35, slowTauS: 3, slowShare: 0.55 };
    const recording = recordClosedFormCurve(twoCompartmentCurve(blow), { rateHz: 100, signal: 'flow', leadInS: 0.5, durationS: 16, holdFromS: 13 });
    const { metrics, findings } = analyzeRecording(recording, DEFAULT_ENGINE_PARAMETERS);
    expect(metrics.timeToPefS).toBeCloseTo(0.25, 2);
    expect(findings.map((finding) => finding.code)).toContain('peak-late');
  });
});
