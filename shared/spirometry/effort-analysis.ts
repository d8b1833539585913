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
 * Curve-processing parameters when the protocol rule set gives none (the same values as the
 * default rule set). [memory]: recalled from the standard, not read in the primary text;
 * [practice]: common practice, no published source.
 */
export const DEFAULT_ENGINE_PARAMETERS: EngineParameters = {
  minSampleRateHz: 100, // [memory] ATS/ERS 2019: flow sampled at 100 Hz or more
  // [memory] ATS/ERS 2019: the line through the point of peak flow with slope equal to peak flow
  // (0: no window); a study may set 0.080 s for the ATS/ERS 2005 practice of the steepest 80 ms [memory].
  backExtrapolationWindowS: 0,
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

/** One effort analysed: what was measured, what was noticed, and (on request) what to draw. */
export interface RecordingAnalysis {
  readonly metrics: EffortMetrics;
  readonly findings: Finding[];
  /** Null unless {@link AnalysisOptions.plot} asked for it. */
  readonly plot: PlotSeries | null;
}

/** Options of the per-effort analysis. */
export interface AnalysisOptions {
  /** Build the plot series (for the reader's screen); the analysis alone does not need them. */
  readonly plot?: boolean;
}

/**
 * Analyses one recording: checks its sampling, derives both signals, finds the
 * forced blow, measures it and lists the per-effort findings; builds the plot series
 * when asked. Throws {@link SpirometryInputError} (`sample-rate`, `too-few-samples`,
 * `non-finite`, `no-blow`).
 */
export function analyzeRecording(
  rec: Recording,
  params: EngineParameters = DEFAULT_ENGINE_PARAMETERS,
  options: AnalysisOptions = {},
): RecordingAnalysis {
  checkSampling(rec, params);
  const sig = toDualSignal(rec);
  const measured = measureEffortDetailed(sig, params, rec.label);
  const findings = findEffortFindings(sig, measured, params);
  return { metrics: measured.metrics, findings, plot: options.plot ? buildPlotSeries(sig, measured) : null };
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
  const flow = sig.flowLPerS;
  const stride = Math.max(1, Math.ceil(n / (MAX_PLOT_POINTS / 2)));
  // Marks instead of a sorted set: the kept indices come out in order in one pass.
  const keep = new Uint8Array(n);
  for (let start = 0; start < n; start += stride) {
    const end = Math.min(n, start + stride);
    let lo = start;
    let hi = start;
    for (let i = start + 1; i < end; i++) {
      if (flow[i] < flow[lo]) lo = i;
      if (flow[i] > flow[hi]) hi = i;
    }
    keep[lo] = 1;
    keep[hi] = 1;
  }
  keep[n - 1] = 1;
  keep[blow.maxInspirationIndex] = 1;
  keep[blow.peakFlowIndex] = 1;
  keep[metrics.endOfExpirationIndex] = 1;
  const ref = blow.referenceVolumeL;
  const t0 = metrics.timeZeroS;
  const timeS: number[] = [];
  const volumeL: number[] = [];
  const flowLPerS: number[] = [];
  for (let i = 0; i < n; i++) {
    if (keep[i] === 0) continue;
    timeS.push(round(sig.startTimeS + i / sig.sampleRateHz - t0, 5));
    volumeL.push(round(sig.volumeL[i] - ref, 5));
    flowLPerS.push(round(flow[i], 4));
  }
  // The line meets the start volume at time zero and runs to the point of peak flow (or through the steepest window).
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
