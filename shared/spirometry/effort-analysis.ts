import {
  type DualSignal,
  type EffortMetrics,
  type EngineParameters,
  type Finding,
  type PlotSeries,
  type Recording,
  SpirometryInputError,
} from './model.js';
import { findEffortFindings } from './effort-findings.js';
import { type MeasuredEffort, measureEffortDetailed } from './effort-metrics.js';
import { toDualSignal } from './signal.js';

/**
 * Curve-processing parameters when the protocol rule set gives none. Status marks as in
 * engine.md: [memory] recalled from the standard, [practice] no published source.
 */
export const DEFAULT_ENGINE_PARAMETERS: EngineParameters = {
  minSampleRateHz: 100, // [memory] ATS/ERS 2019: flow sampled at 100 Hz or more
  backExtrapolationWindowS: 0.08, // [memory] ATS/ERS 2005: steepest slope over 80 ms
  bevMaxFractionOfFvc: 0.05, // [memory] ATS/ERS 2019: BEV <= 5 % of FVC or 0.100 L, whichever is greater
  bevMaxL: 0.1, // [memory] ATS/ERS 2019
  hesitationMaxS: 2, // [memory] ATS/ERS 2019: hesitation time 2 s or less
  plateauMaxVolumeChangeL: 0.025, // [memory] ATS/ERS 2019: <= 0.025 L in the last 1 s
  plateauWindowS: 1, // [memory] ATS/ERS 2019
  longExpirationFetS: 15, // [memory] ATS/ERS 2019: FET of 15 s or more
  fivcExcessMaxL: 0.1, // [memory] ATS/ERS 2019 (a secondary source says 0.150 L)
  fivcExcessMaxFractionOfFvc: 0.05, // [memory] ATS/ERS 2019
  peakLateS: 0.15, // [practice]
  submaximalPefFraction: 0.85, // [practice]
  coughDipFraction: 0.3, // [practice]
  glotticStopFlowLPerS: 0.1, // [practice]
  glotticStopFallTimeS: 0.05, // [practice]
  zeroDriftMaxLPerS: 0.025, // [practice]
};

/** Shortest recording analysed (s) [practice]. */
export const MIN_RECORDING_DURATION_S = 1;
/** Plots carry at most about this many points per series. */
export const MAX_PLOT_POINTS = 1500;

/** One effort analysed: what was measured, what was noticed, and what to draw. */
export interface RecordingAnalysis {
  readonly metrics: EffortMetrics;
  readonly findings: Finding[];
  readonly plot: PlotSeries;
}

/**
 * Analyses one recording: checks its sampling, derives both signals, finds the
 * forced blow, measures it and lists the per-effort findings. Throws
 * {@link SpirometryInputError} (`sample-rate`, `too-few-samples`, `no-blow`).
 */
export function analyzeRecording(rec: Recording, params: EngineParameters = DEFAULT_ENGINE_PARAMETERS): RecordingAnalysis {
  checkSampling(rec, params);
  const sig = toDualSignal(rec);
  const measured = measureEffortDetailed(sig, params, rec.label);
  const findings = findEffortFindings(sig, measured.metrics, params);
  return { metrics: measured.metrics, findings, plot: buildPlotSeries(sig, measured) };
}

function checkSampling(rec: Recording, params: EngineParameters): void {
  if (!(rec.sampleRateHz >= params.minSampleRateHz)) {
    throw new SpirometryInputError(
      'sample-rate',
      `${rec.label}: sampling rate ${Number(rec.sampleRateHz).toFixed(1)} Hz is below the minimum of ${params.minSampleRateHz} Hz`,
      { file: rec.label },
    );
  }
  const durationS = (rec.values.length - 1) / rec.sampleRateHz;
  if (!(durationS >= MIN_RECORDING_DURATION_S)) {
    throw new SpirometryInputError(
      'too-few-samples',
      `${rec.label}: too few samples: ${rec.values.length} covering ${Math.max(0, durationS).toFixed(3)} s; ` +
        `a recording must cover at least ${MIN_RECORDING_DURATION_S} s`,
      { file: rec.label },
    );
  }
  for (let i = 0; i < rec.values.length; i++) {
    if (!Number.isFinite(rec.values[i])) {
      throw new SpirometryInputError('non-finite', `${rec.label}: sample ${i + 1} is not a finite number`, { file: rec.label });
    }
  }
}

/**
 * Plot series: time from time zero, volume from maximal inspiration, at most about
 * {@link MAX_PLOT_POINTS} points: the lowest and highest flow sample of each stride (so
 * that a short cough dip or the peak is not lost), plus maximal inspiration, peak flow,
 * end of expiration and the last sample.
 */
export function buildPlotSeries(sig: DualSignal, measured: MeasuredEffort): PlotSeries {
  const { metrics, blow, timeZero } = measured;
  const n = sig.volumeL.length;
  const stride = Math.max(1, Math.ceil(n / (MAX_PLOT_POINTS / 2)));
  const keep: number[] = [];
  for (let start = 0; start < n; start += stride) {
    const end = Math.min(n, start + stride);
    let lo = start;
    let hi = start;
    for (let i = start + 1; i < end; i++) {
      if (sig.flowLPerS[i] < sig.flowLPerS[lo]) lo = i;
      if (sig.flowLPerS[i] > sig.flowLPerS[hi]) hi = i;
    }
    keep.push(lo, hi);
  }
  keep.push(n - 1, blow.maxInspirationIndex, blow.peakFlowIndex, blow.endOfExpirationIndex);
  const indices = [...new Set(keep)].sort((a, b) => a - b);
  const ref = blow.referenceVolumeL;
  const t0 = metrics.timeZeroS;
  const timeS: number[] = [];
  const volumeL: number[] = [];
  const flowLPerS: number[] = [];
  for (const i of indices) {
    timeS.push(round(sig.startTimeS + i / sig.sampleRateHz - t0, 5));
    volumeL.push(round(sig.volumeL[i] - ref, 5));
    flowLPerS.push(round(sig.flowLPerS[i], 4));
  }
  // The line meets the start volume at time zero and runs through the steepest window.
  const lineEndS = timeZero.windowEndTimeS - t0;
  return {
    timeS,
    volumeL,
    flowLPerS,
    backExtrapolation: {
      timeS: [0, round(lineEndS, 5)],
      volumeL: [0, round(timeZero.slopeLPerS * lineEndS, 5)],
    },
  };
}

function round(x: number, digits: number): number {
  const k = 10 ** digits;
  return Math.round(x * k) / k;
}
