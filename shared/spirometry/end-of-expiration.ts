import type { DualSignal } from './model.js';
import type { ForcedBlow } from './forced-blow.js';
import { sampleTimeS } from './signal.js';

/** Where forced expiration ended, and whether it ended on a plateau. */
export interface EndOfExpiration {
  /** First sample at which the plateau criterion holds; the last expiratory sample when it never does. */
  readonly index: number;
  /**
   * Time (s, recording axis) of the end of forced expiration: where the volume gained over the
   * preceding window first falls to the limit, interpolated between samples; else the time of `index`.
   */
  readonly timeS: number;
  /** Whether the plateau was reached before the subject breathed in or the recording ended. */
  readonly plateau: boolean;
  /** Volume gained (L) over the window ending at `index` (over the whole blow when it is shorter than the window). */
  readonly windowVolumeChangeL: number;
}

/**
 * End of forced expiration (EOFE criterion 1, ATS/ERS 2019 (Graham 2019), values from memory):
 * the first time at which the volume gained over the preceding `windowS` is at most
 * `maxVolumeChangeL`, provided it comes before the subject breathes in or the recording
 * ends. Otherwise expiration ended at the last expiratory sample without a plateau.
 *
 * The gain is taken from the highest volume reached so far, not the current one, so that
 * the bottom of a short breath in during the blow does not pass for a plateau. On a
 * monotonic curve the two are the same. The window must start at or after maximal
 * inspiration, so a blow shorter than the window has no plateau.
 */
export function findEndOfExpiration(sig: DualSignal, blow: ForcedBlow, windowS: number, maxVolumeChangeL: number): EndOfExpiration {
  const v = sig.volumeL;
  const w = Math.max(1, Math.round(windowS * sig.sampleRateHz));
  const start = blow.maxInspirationIndex;
  const last = blow.lastExpiratoryIndex;
  // Any window holding the rise to peak flow gains far more than a plateau allows.
  const from = Math.max(blow.peakFlowIndex + 1, start + w);
  let runningMaxL = v[start];
  let previousGainL = Number.NaN;
  for (let i = start + 1; i <= last; i++) {
    if (v[i] > runningMaxL) runningMaxL = v[i];
    if (i < from) continue;
    const gainL = runningMaxL - v[i - w];
    if (gainL <= maxVolumeChangeL) {
      let timeS = sampleTimeS(sig, i);
      if (previousGainL > maxVolumeChangeL) {
        timeS = sampleTimeS(sig, i - 1 + (previousGainL - maxVolumeChangeL) / (previousGainL - gainL));
      }
      return { index: i, timeS, plateau: true, windowVolumeChangeL: gainL };
    }
    previousGainL = gainL;
  }
  return {
    index: last,
    timeS: sampleTimeS(sig, last),
    plateau: false,
    windowVolumeChangeL: runningMaxL - v[Math.max(start, last - w)],
  };
}
