import { describe, expect, it } from '@jest/globals';
import { DEFAULT_ENGINE_PARAMETERS, analyzeRecording } from './effort-analysis.js';
import type { SignalKind } from './model.js';
import { type AnalyticBlow, analyticFlowLPerS, analyticPlateauTimeS, analyticVolumeL, recordAnalyticBlow } from './synthetic/analytic-curve.js';

// EOFE criterion 1 (plateau: volume change of 0.025 L or less in the last 1 s of expiration)
// and criterion 2 (FET of 15 s or more): Graham BL et al., ATS/ERS 2019, values from memory.
const WINDOW_S = DEFAULT_ENGINE_PARAMETERS.plateauWindowS;
const LIMIT_L = DEFAULT_ENGINE_PARAMETERS.plateauMaxVolumeChangeL;
const LEAD_IN_S = 0.5;

const SETTINGS: [number, SignalKind][] = [
  [100, 'volume'],
  [100, 'flow'],
  [1000, 'volume'],
  [1000, 'flow'],
];

/** Fast emptying: PEF 8 L/s, tr 0.1 s, tau from 0.3 s (very fast) to 1.0 s (our analytic curve). */
const FAST: AnalyticBlow[] = [0.3, 0.5, 0.6, 1.0].map((tauS) => ({ pefLPerS: 8, riseS: 0.1, tauS }));

describe('end of forced expiration on analytic curves that empty and stay on the mouthpiece', () => {
  const cases: [number, number, SignalKind, AnalyticBlow][] = [];
  for (const blow of FAST) for (const [rate, signal] of SETTINGS) cases.push([blow.tauS, rate, signal, blow]);

  it.each(cases)('tau %f s at %i Hz from %s: plateau met where the closed form puts it, no end-early', (_tau, rate, signal, blow) => {
    // Emptied to within PEF tau e^-8 (under 3 mL) by tr + 8 tau, then held flat for 3 s.
    const holdFromS = blow.riseS + 8 * blow.tauS;
    const recording = recordAnalyticBlow(blow, { rateHz: rate, signal, leadInS: LEAD_IN_S, durationS: holdFromS + 3, holdFromS });
    const { metrics, findings } = analyzeRecording(recording, DEFAULT_ENGINE_PARAMETERS);
    expect(metrics.endOfTest.plateau).toBe(true);
    expect(metrics.endOfTest.met).toBe(true);
    expect(metrics.endOfTest.lastSecondVolumeChangeL).toBeLessThanOrEqual(LIMIT_L);
    expect(findings.map((finding) => finding.code)).not.toContain('end-early');

    // Closed form of our analytic curve (linear rise then exponential decay, exact values from its
    // definition): for t - 1 >= tr, V(t) - V(t - 1) = PEF tau e^{-(t - tr)/tau} (e^{1/tau} - 1), where
    // PEF tau = FVC - PEF tr/2 is the volume still to come at the peak. Solving it for 0.025 L gives
    // the end of forced expiration t_e = tr + tau ln(PEF tau (e^{1/tau} - 1) / 0.025).
    const endS = analyticPlateauTimeS(blow, WINDOW_S, LIMIT_L);
    if (endS === null) throw new Error('the plateau point must lie on the exponential part');
    expect(endS).toBeLessThan(holdFromS);
    const measuredEndS = metrics.timeZeroS + metrics.fetS - LEAD_IN_S;
    // Interpolated between samples; a flow signal's trapezoidal volume adds well under a millisecond.
    expect(Math.abs(measuredEndS - endS)).toBeLessThan(0.001);
    // FET from time zero tr/2 (line through the point of peak flow with slope PEF, ATS/ERS 2019, from memory),
    // which a volume signal's 10 ms chords put up to 1 ms early.
    expect(Math.abs(metrics.fetS - (endS - blow.riseS / 2))).toBeLessThan(0.002);
    // FVC stays the largest volume of the blow: the volume held.
    expect(Math.abs(metrics.fvcL - analyticVolumeL(blow, holdFromS))).toBeLessThan(0.001);
  });

  it.each(cases)('tau %f s at %i Hz from %s: cut off while still blowing (breath in, or recording stops) is end-early', (_tau, rate, signal, blow) => {
    const stopS = blow.riseS + 3 * blow.tauS;
    // Still exhaling clearly when cut off: flow PEF e^-3 = 0.40 L/s, above 0.1 L/s.
    expect(analyticFlowLPerS(blow, stopS)).toBeGreaterThan(0.1);
    const breathIn = recordAnalyticBlow(blow, { rateHz: rate, signal, leadInS: LEAD_IN_S, durationS: stopS + 2.5, breathInFromS: stopS, breathInS: 1.5 });
    const stopped = recordAnalyticBlow(blow, { rateHz: rate, signal, leadInS: LEAD_IN_S, durationS: stopS });
    for (const recording of [breathIn, stopped]) {
      const { metrics, findings } = analyzeRecording(recording, DEFAULT_ENGINE_PARAMETERS);
      expect(metrics.endOfTest.plateau).toBe(false);
      expect(metrics.endOfTest.met).toBe(false);
      expect(metrics.endOfTest.lastSecondVolumeChangeL).toBeGreaterThan(LIMIT_L);
      expect(findings.map((finding) => finding.code)).toContain('end-early');
      // Expiration ended at the last expiratory sample: where the subject was cut off (within two samples).
      const measuredEndS = metrics.timeZeroS + metrics.fetS - LEAD_IN_S;
      expect(Math.abs(measuredEndS - stopS)).toBeLessThanOrEqual(2 / rate + 1e-9);
      expect(Math.abs(metrics.fvcL - analyticVolumeL(blow, stopS))).toBeLessThan(0.005);
    }
  });
});

describe('end of forced expiration of a long, slow emptying (obstruction)', () => {
  // PEF 1.2 L/s, tr 0.1 s, tau 6 s: still gaining PEF tau e^{-(t - tr)/tau} (e^{1/6} - 1) = 0.09 L in the
  // 16th second, so no plateau; only the FET criterion (15 s or more) can end it.
  const slow: AnalyticBlow = { pefLPerS: 1.2, riseS: 0.1, tauS: 6 };

  it.each(SETTINGS)('recorded 16 s at %i Hz from %s: FET of 15 s or more ends it', (rate, signal) => {
    const recording = recordAnalyticBlow(slow, { rateHz: rate, signal, leadInS: LEAD_IN_S, durationS: 16 });
    const { metrics, findings } = analyzeRecording(recording, DEFAULT_ENGINE_PARAMETERS);
    expect(metrics.endOfTest.plateau).toBe(false);
    expect(metrics.endOfTest.longExpiration).toBe(true);
    expect(metrics.endOfTest.met).toBe(true);
    expect(metrics.fetS).toBeGreaterThanOrEqual(15);
    // FET = end of the recording - time zero; time zero of the curve is tr/2 = 0.05 s after the onset.
    expect(Math.abs(metrics.fetS - (16 - slow.riseS / 2))).toBeLessThan(0.01);
    expect(findings.map((finding) => finding.code)).toEqual([]);
  });

  it.each(SETTINGS)('recorded 14 s at %i Hz from %s: neither plateau nor 15 s, end-early', (rate, signal) => {
    const recording = recordAnalyticBlow(slow, { rateHz: rate, signal, leadInS: LEAD_IN_S, durationS: 14 });
    const { metrics, findings } = analyzeRecording(recording, DEFAULT_ENGINE_PARAMETERS);
    expect(metrics.endOfTest.met).toBe(false);
    expect(metrics.fetS).toBeLessThan(15);
    expect(findings.map((finding) => finding.code)).toContain('end-early');
  });
});

describe('end of forced expiration with a breath in during the blow', () => {
  it('the bottom of a short breath in is not a plateau; expiration goes on to the real one', () => {
    // PEF 3 L/s, tr 0.1 s, tau 2 s: at 4 s the blow gains 0.34 L a second and 0.85 L are still to come.
    // A 0.4 L breath in centred there makes the volume one second later lower than before (a naive
    // "gain over the last second" would call that a plateau).
    const blow: AnalyticBlow = { pefLPerS: 3, riseS: 0.1, tauS: 2 };
    const rate = 100;
    const durationS = 16;
    const n = Math.round((LEAD_IN_S + durationS) * rate) + 1;
    const values = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      const t = i / rate - LEAD_IN_S;
      const x = (t - 4) / 0.5;
      const dipL = Math.abs(x) < 1 ? 0.4 * Math.cos((Math.PI * x) / 2) ** 2 : 0;
      values[i] = analyticVolumeL(blow, t) - dipL;
    }
    const { metrics, findings } = analyzeRecording({ signal: 'volume', sampleRateHz: rate, startTimeS: 0, values, label: 'dip' }, DEFAULT_ENGINE_PARAMETERS);
    const endS = analyticPlateauTimeS(blow, WINDOW_S, LIMIT_L);
    if (endS === null) throw new Error('the plateau point must lie on the exponential part');
    expect(metrics.endOfTest.plateau).toBe(true);
    expect(Math.abs(metrics.timeZeroS + metrics.fetS - LEAD_IN_S - endS)).toBeLessThan(0.001);
    expect(findings.map((finding) => finding.code)).toContain('inspiration-during-blow');
  });
});
