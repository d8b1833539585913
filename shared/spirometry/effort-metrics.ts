import type { DualSignal, EffortMetrics, EngineParameters } from './model.js';
import { type ForcedBlow, locateForcedBlow } from './forced-blow.js';
import { firstUpwardCrossingTimeS, sampleTimeS, valueAtTime } from './signal.js';
import { type TimeZero, findTimeZero } from './time-zero.js';

/** PEF is the highest flow sample or the highest mean volume slope over this span (s), whichever is larger [practice]. */
export const PEF_VOLUME_SLOPE_SPAN_S = 0.01;

/** Metrics with the intermediate results they were computed from (for plots and findings). */
export interface MeasuredEffort {
  readonly metrics: EffortMetrics;
  readonly blow: ForcedBlow;
  readonly timeZero: TimeZero;
}

/**
 * Measures one effort (engine.md section 1): time zero and BEV by back-extrapolation,
 * FEV0.75/FEV1/FEV6 as the volume at time zero + t (BEV included, linear interpolation),
 * FVC, PEF, FEF25/50/75, FEF25-75, FET, hesitation time, FIVC and the end-of-test evidence.
 * Volumes are relative to maximal inspiration. `repeatsPriorFvc` is left false: it needs
 * the session.
 */
export function measureEffort(sig: DualSignal, params: EngineParameters, label = 'recording'): EffortMetrics {
  return measureEffortDetailed(sig, params, label).metrics;
}

/** {@link measureEffort} with the located blow and the back-extrapolation line. */
export function measureEffortDetailed(sig: DualSignal, params: EngineParameters, label = 'recording'): MeasuredEffort {
  const blow = locateForcedBlow(sig, label);
  const timeZero = findTimeZero(sig, blow, params.backExtrapolationWindowS);
  const v = sig.volumeL;
  const ref = blow.referenceVolumeL;
  const t0 = timeZero.timeZeroS;
  const fvcL = v[blow.maxVolumeIndex] - ref;
  const lastExpiratoryTimeS = sampleTimeS(sig, blow.lastExpiratoryIndex);
  const endTimeS = sampleTimeS(sig, blow.endOfExpirationIndex);
  const fetS = endTimeS - t0;

  const volumeAt = (timeS: number): number | null => {
    if (timeS > lastExpiratoryTimeS + 1e-9) return null;
    const value = valueAtTime(sig, v, timeS);
    return value === null ? null : value - ref;
  };

  // Plateau: the last second of the expiratory phase, up to the breath in or the end of the
  // recording, so that a subject who empties fast and stays on the mouthpiece shows one,
  // and one who breathes in (or is cut off) while still exhaling does not.
  const startTimeS = sampleTimeS(sig, blow.maxInspirationIndex);
  const windowStartS = Math.max(startTimeS, lastExpiratoryTimeS - params.plateauWindowS);
  const lastSecondVolumeChangeL = (valueAtTime(sig, v, lastExpiratoryTimeS) ?? 0) - (valueAtTime(sig, v, windowStartS) ?? 0);
  const plateau = lastExpiratoryTimeS - t0 >= params.plateauWindowS && lastSecondVolumeChangeL <= params.plateauMaxVolumeChangeL;
  const longExpiration = fetS >= params.longExpirationFetS;

  // FEV6 needs the subject still on the mouthpiece, not breathing in, at 6 s, and a blow that
  // either lasted 6 s or had already emptied to a plateau (then FEV6 is the volume held).
  const fev6L = fetS >= 6 || plateau ? volumeAt(t0 + 6) : null;

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

  const pefLPerS = peakExpiratoryFlow(sig, blow);
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
      lastSecondVolumeChangeL,
      plateau,
      longExpiration,
      repeatsPriorFvc: false,
    },
    maxInspirationIndex: blow.maxInspirationIndex,
    peakFlowIndex: blow.peakFlowIndex,
    endOfExpirationIndex: blow.endOfExpirationIndex,
  };
  return { metrics, blow, timeZero };
}

/**
 * PEF without smoothing: the larger of the highest flow sample and the highest mean
 * volume slope over 10 ms (at least one sample interval). For flow input the second
 * never exceeds the first; for volume input it avoids the low bias of central
 * differences at a sharp peak (engine.md section 9 curve at 100 Hz: 7.93 instead of 7.77 L/s).
 */
function peakExpiratoryFlow(sig: DualSignal, blow: ForcedBlow): number {
  const v = sig.volumeL;
  const m = Math.max(1, Math.round(PEF_VOLUME_SLOPE_SPAN_S * sig.sampleRateHz));
  let best = sig.flowLPerS[blow.peakFlowIndex];
  const last = Math.min(v.length - 1, blow.endOfExpirationIndex);
  for (let i = blow.maxInspirationIndex; i + m <= last; i++) {
    const slope = ((v[i + m] - v[i]) * sig.sampleRateHz) / m;
    if (slope > best) best = slope;
  }
  return best;
}
