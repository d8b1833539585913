import { describe, expect, it } from '@jest/globals';
import { captureInputError as errorOf } from './testing/capture-input-error.js';
import { DEFAULT_ENGINE_PARAMETERS, MAX_PLOT_POINTS, analyzeRecording } from './effort-analysis.js';
import { toDualSignal } from './signal.js';
import { generateEffort } from './synthetic/curve-generator.js';


describe('analyzeRecording', () => {
  it('finds the blow after tidal breathing and measures FIVC from the inspiration after it', () => {
    const { recording, truth } = generateEffort({ sampleRateHz: 1000, signal: 'flow', tidalBreaths: 3, inspirationAfter: true }, 21);
    const { metrics } = analyzeRecording(recording, DEFAULT_ENGINE_PARAMETERS);
    // Truth from the generator's own integration of its noise-free flow; accuracy ATS/ERS 2005 Table 6 (3 % or 0.050 L).
    expect(Math.abs(metrics.fvcL - truth.fvcL)).toBeLessThan(Math.max(0.03 * truth.fvcL, 0.05));
    expect(Math.abs((metrics.fev1L ?? 0) - truth.fev1L)).toBeLessThan(Math.max(0.03 * truth.fev1L, 0.05));
    expect(Math.abs((metrics.fivcL ?? 0) - (truth.fivcL ?? 0))).toBeLessThan(0.05);
    // Time zero within 5 ms of the generator's own line through the peak with slope PEF (ATS/ERS 2019, from memory);
    // sensor noise moves the measured point of peak flow by a few milliseconds at most.
    expect(Math.abs(metrics.timeZeroS - truth.timeZeroS)).toBeLessThan(0.005);
    // The blow starts at the maximal inspiration, after the three 3.5 s tidal breaths and the lead-in.
    expect(metrics.maxInspirationIndex / recording.sampleRateHz).toBeGreaterThan(0.5 + 3 * 3.5);
  });

  it('plots from time zero and maximal inspiration, with at most about 1500 points and the back-extrapolation line', () => {
    const { recording } = generateEffort({ sampleRateHz: 1000, blowDurationS: 14 }, 2);
    const { metrics, plot: requested } = analyzeRecording(recording, DEFAULT_ENGINE_PARAMETERS, { plot: true });
    if (requested === null) throw new Error('plot series were asked for');
    const plot = requested;
    expect(plot.timeS.length).toBeLessThanOrEqual(MAX_PLOT_POINTS + 10);
    expect(plot.volumeL.length).toBe(plot.timeS.length);
    expect(plot.flowLPerS.length).toBe(plot.timeS.length);
    // Decimation keeps each stride's extreme flows, so the plotted peak is the signal's own largest flow sample.
    const flow = toDualSignal(recording).flowLPerS;
    expect(Math.max(...plot.flowLPerS)).toBeCloseTo(Math.max(...flow), 3);
    expect(Math.min(...plot.flowLPerS)).toBeCloseTo(Math.min(...flow), 3);
    expect(Math.max(...plot.volumeL)).toBeCloseTo(metrics.fvcL, 3);
    expect(Math.min(...plot.volumeL)).toBeGreaterThanOrEqual(-0.01);
    // The back-extrapolation line meets the start volume at time zero and rises with the steepest slope.
    expect(plot.backExtrapolation.timeS[0]).toBe(0);
    expect(plot.backExtrapolation.volumeL[0]).toBe(0);
    const slope = plot.backExtrapolation.volumeL[1] / plot.backExtrapolation.timeS[1];
    expect(Math.abs(slope - metrics.pefLPerS) / metrics.pefLPerS).toBeLessThan(0.1);
  });

  it('builds plot series only on request: the analysis alone does not need them', () => {
    const { recording } = generateEffort({ sampleRateHz: 100 }, 2);
    const plain = analyzeRecording(recording, DEFAULT_ENGINE_PARAMETERS);
    const plotted = analyzeRecording(recording, DEFAULT_ENGINE_PARAMETERS, { plot: true });
    expect(plain.plot).toBeNull();
    expect(plotted.plot?.timeS.length).toBeGreaterThan(100);
    expect(plain.metrics).toEqual(plotted.metrics);
    expect(plain.findings).toEqual(plotted.findings);
  });

  it('rejects a recording sampled below the minimum rate (ATS/ERS 2019: 100 Hz, from memory)', () => {
    const values = new Float64Array(200);
    const error = errorOf(() => analyzeRecording({ signal: 'flow', sampleRateHz: 60, startTimeS: 0, values, label: 'slow.json' }, DEFAULT_ENGINE_PARAMETERS));
    expect(error.code).toBe('sample-rate');
    expect(error.message).toBe('slow.json: sampling rate 60.0 Hz is below the minimum of 100 Hz');
  });

  it('rejects a recording shorter than 1 s (common practice)', () => {
    const values = new Float64Array(50);
    const error = errorOf(() => analyzeRecording({ signal: 'flow', sampleRateHz: 100, startTimeS: 0, values, label: 'short' }, DEFAULT_ENGINE_PARAMETERS));
    expect(error.code).toBe('too-few-samples');
    expect(error.message).toMatch(/50 covering 0\.490 s/);
  });

  it('rejects non-finite samples from any source', () => {
    const values = new Float64Array(300).fill(Number.NaN);
    const error = errorOf(() => analyzeRecording({ signal: 'volume', sampleRateHz: 100, startTimeS: 0, values, label: 'nan' }, DEFAULT_ENGINE_PARAMETERS));
    expect(error.code).toBe('non-finite');
  });
});
