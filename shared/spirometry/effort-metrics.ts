import type { DualSignal, EffortMetrics, EngineParameters } from './model.js';
import { type EndOfExpiration, findEndOfExpiration } from './end-of-expiration.js';
import { type ForcedBlow, locateForcedBlow } from './forced-blow.js';
import { firstUpwardCrossingTimeS, sampleTimeS, valueAtTime } from './signal.js';
import { type PeakFlow, type TimeZero, findTimeZero } from './time-zero.js';

/** PEF is the highest flow sample or the highest mean volume slope over this span (s), whichever is larger [practice]. */
export const PEF_VOLUME_SLOPE_SPAN_S = 0.01;

/** Metrics with the intermediate results they were computed from (for plots and findings). */
export interface MeasuredEffort {
  readonly metrics: EffortMetrics;
  readonly blow: ForcedBlow;
  readonly timeZero: TimeZero;
  readonly endOfExpiration: EndOfExpiration;
}

/**
 * Measures one effort by the ATS/ERS definitions (Graham 2019; Miller 2005; details from
 * memory): time zero and BEV by back-extrapolation, FEV0.75/FEV1/FEV6 as the volume at
 * time zero + t (BEV included, linear interpolation), FVC (the largest expired volume of
 * the blow), PEF, FEF25/50/75, FEF25-75, FET (time zero to the end of forced expiration),
 * hesitation time, FIVC and the end-of-test evidence.
 * Volumes are relative to maximal inspiration. `repeatsPriorFvc` is left false: it needs
 * the session.
 */
export function measureEffort(sig: DualSignal, params: EngineParameters, label = 'recording'): EffortMetrics {
  return measureEffortDetailed(sig, params, label).metrics;
}

/** {@link measureEffort} with the located blow, the back-extrapolation line and the end of expiration. */
export function measureEffortDetailed(sig: DualSignal, params: EngineParameters, label = 'recording'): MeasuredEffort {
  const blow = locateForcedBlow(sig, label);
  // End of forced expiration: where the plateau is reached, else the last expiratory sample
  // (before the breath in or the end of the recording); FET runs from time zero to it.
  const end = findEndOfExpiration(sig, blow, params.plateauWindowS, params.plateauMaxVolumeChangeL);
  const peak = peakExpiratoryFlow(sig, blow, end.index);
  const timeZero = findTimeZero(sig, blow, params.backExtrapolationWindowS, peak);
  const v = sig.volumeL;
  const ref = blow.referenceVolumeL;
  const t0 = timeZero.timeZeroS;
  const fvcL = v[blow.maxVolumeIndex] - ref;
  const lastExpiratoryTimeS = sampleTimeS(sig, blow.lastExpiratoryIndex);
  const fetS = end.timeS - t0;

  const volumeAt = (timeS: number): number | null => {
    if (timeS > lastExpiratoryTimeS + 1e-9) return null;
    const value = valueAtTime(sig, v, timeS);
    return value === null ? null : value - ref;
  };

  const startTimeS = sampleTimeS(sig, blow.maxInspirationIndex);
  const plateau = end.plateau;
  const longExpiration = fetS >= params.longExpirationFetS;

  // FEV6 only when the expiration lasted 6 s (ATS/ERS practice, from memory): the subject was still
  // on the mouthpiece and had not breathed in at time zero + 6 s. A subject who emptied to a plateau
  // earlier and stayed there has FEV6 = the volume held (about FVC); one who breathed in, or whose
  // recording ended, before 6 s has none (`volumeAt` is null beyond the last expiratory sample).
  const fev6L = volumeAt(t0 + 6);

  const fefAt = (fraction: number): { timeS: number; flowLPerS: number } | null => {
    const timeS = firstUpwardCrossingTimeS(sig, v, ref + fraction * fvcL, blow.maxInspirationIndex, blow.maxVolumeIndex);
    if (timeS === null) return null;
    const flowLPerS = valueAtTime(sig, sig.flowLPerS, timeS);
    return flowLPerS === null ? null : { timeS, flowLPerS };
  };
  const fef25 = fefAt(0.25);
  const fef50 = fefAt(0.5);
  const fef75 = fefAt(0.75);
  const fef2575LPerS = fef25 && fef75 && fef75.timeS > fef25.timeS ? (0.5 * fvcL) / (fef75.timeS - fef25.timeS) : null;

  const pefLPerS = peak.pefLPerS;
  const postMin = blow.postBlowMinVolumeL;
  const metrics: EffortMetrics = {
    timeZeroS: t0,
    bevL: timeZero.bevL,
    hesitationTimeS: t0 - startTimeS,
    fev075L: volumeAt(t0 + 0.75),
    fev1L: volumeAt(t0 + 1),
    fev6L,
    fvcL,
    pefLPerS,
    timeToPefS: sampleTimeS(sig, blow.peakFlowIndex) - t0,
    fef25LPerS: fef25?.flowLPerS ?? null,
    fef50LPerS: fef50?.flowLPerS ?? null,
    fef75LPerS: fef75?.flowLPerS ?? null,
    fef2575LPerS,
    fetS,
    fivcL: postMin === null ? null : v[blow.maxVolumeIndex] - postMin,
    endOfTest: {
      met: plateau || longExpiration,
      lastSecondVolumeChangeL: end.windowVolumeChangeL,
      plateau,
      longExpiration,
      repeatsPriorFvc: false,
    },
    maxInspirationIndex: blow.maxInspirationIndex,
    peakFlowIndex: blow.peakFlowIndex,
    endOfExpirationIndex: end.index,
  };
  return { metrics, blow, timeZero, endOfExpiration: end };
}

/**
 * PEF without smoothing, and its point on the volume-time curve: the larger of the highest
 * flow sample and the highest mean volume slope over 10 ms (at least one sample interval).
 * For flow input the second never exceeds the first; for volume input it avoids the low
 * bias of central differences at a sharp peak (our analytic test curve, PEF 8 L/s, at
 * 100 Hz: 7.93 instead of 7.77 L/s). The point of a chord is its midpoint, so that the line
 * through it with the chord's slope is the chord itself.
 */
function peakExpiratoryFlow(sig: DualSignal, blow: ForcedBlow, endIndex: number): PeakFlow {
  const v = sig.volumeL;
  const m = Math.max(1, Math.round(PEF_VOLUME_SLOPE_SPAN_S * sig.sampleRateHz));
  const p = blow.peakFlowIndex;
  const sampleFlow = sig.flowLPerS[p];
  let chordSlope = -Infinity;
  let chordStart = -1;
  const last = Math.min(v.length - 1, endIndex);
  for (let i = blow.maxInspirationIndex; i + m <= last; i++) {
    const slope = ((v[i + m] - v[i]) * sig.sampleRateHz) / m;
    if (slope > chordSlope) {
      chordSlope = slope;
      chordStart = i;
    }
  }
  const ref = blow.referenceVolumeL;
  // A volume signal's central difference at the peak is itself one of the chords: equal
  // slopes (to rounding) take the chord's line, so that rounding cannot switch the anchor.
  if (chordStart < 0 || chordSlope < sampleFlow - 1e-12 * Math.abs(sampleFlow)) {
    return { pefLPerS: sampleFlow, timeS: sampleTimeS(sig, p), volumeL: v[p] - ref };
  }
  return {
    pefLPerS: Math.max(chordSlope, sampleFlow),
    timeS: sampleTimeS(sig, chordStart + m / 2),
    volumeL: (v[chordStart] + v[chordStart + m]) / 2 - ref,
  };
}
