import { type DualSignal, SpirometryInputError } from './model.js';

/** Where the forced blow lies in a recording; all indices are sample indices. */
export interface ForcedBlow {
  /**
   * Point of maximal inspiration: where the inspiration before the blow ended, i.e. the start of
   * the pause at full inspiration (the first sample of the recording when no inspiration is
   * recorded). Hesitation time runs from here to time zero.
   */
  readonly maxInspirationIndex: number;
  /** Volume (L, file scale) at maximal inspiration: the lowest volume before the peak; every reported volume is relative to it. */
  readonly referenceVolumeL: number;
  /** Sample with the largest expiratory flow. */
  readonly peakFlowIndex: number;
  /** Sample with the largest volume of the blow (FVC = its volume - reference). */
  readonly maxVolumeIndex: number;
  /** Last expiratory sample: the last one within {@link END_OF_EXPIRATION_TOLERANCE_L} of the blow's largest volume before an inspiration follows, or the last sample of the recording. */
  readonly lastExpiratoryIndex: number;
  /** Whether an inspiration follows the blow in the recording. */
  readonly inspirationFollows: boolean;
  /** Lowest volume (L, file scale) of the inspiration after the blow, when there is one. */
  readonly postBlowMinVolumeL: number | null;
}

/** Volume fall below the running maximum (L) that counts as breathing in rather than noise [practice]. */
export const INSPIRATION_FALL_L = 0.1;
/** A breath in deeper than this (L) ends the blow even if expiration later resumes [practice]. */
export const BLOW_ENDING_INSPIRATION_L = 0.5;
/**
 * The pause at full inspiration reaches back, from the lowest volume, over samples where the mean
 * flow over this span (s) is not inspiratory. A volume tie (samples within a few mL of the lowest)
 * does not do: the integral of sensor noise wanders more than that over a pause of seconds, and
 * the hesitation then starts late [practice].
 */
export const PAUSE_FLOW_SPAN_S = 0.05;
/** ... not inspiratory: above minus this flow (L/s) [practice]. */
export const PAUSE_MAX_INSPIRATORY_FLOW_L_PER_S = 0.1;
/** Before a breath in, samples within this volume (L) of the blow's largest volume still count as expiration; less is noise [practice]. */
export const END_OF_EXPIRATION_TOLERANCE_L = 0.005;
/** Below this peak flow (L/s) the recording holds no forced expiration [practice]. */
export const MIN_BLOW_PEAK_FLOW_L_PER_S = 1;
/** Below this exhaled volume (L) the recording holds no forced expiration [practice]. */
export const MIN_BLOW_VOLUME_L = 0.2;

/**
 * Finds the forced blow in a recording that may also hold tidal breathing, the
 * maximal inspiration and a pause before it, a flat tail and an inspiration after it.
 * The blow is around the largest expiratory flow; it starts at maximal inspiration
 * (lowest volume before the peak, walking back until the volume rises again, i.e.
 * past the inspiration); its expiratory phase lasts until the next inspiration or
 * the end of the recording (where forced expiration ended within that phase is
 * `findEndOfExpiration`'s answer). A short breath in during the blow after
 * which expiration goes on past the earlier volume does not end the blow.
 * Throws `no-blow` when there is no forced expiration.
 */
export function locateForcedBlow(sig: DualSignal, label: string): ForcedBlow {
  const v = sig.volumeL;
  const f = sig.flowLPerS;
  const n = v.length;
  let p = 0;
  for (let i = 1; i < n; i++) if (f[i] > f[p]) p = i;
  if (n < 3 || !(f[p] >= MIN_BLOW_PEAK_FLOW_L_PER_S)) {
    throw new SpirometryInputError(
      'no-blow',
      `${label}: no forced expiration found: the highest expiratory flow is ${(f[p] ?? 0).toFixed(2)} L/s ` +
        `(a forced blow reaches at least ${MIN_BLOW_PEAK_FLOW_L_PER_S.toFixed(1)} L/s)`,
      { file: label },
    );
  }

  // Walk back from the peak while the volume keeps (about) falling: the lowest point is full inspiration.
  let minIdx = p;
  for (let i = p - 1; i >= 0; i--) {
    if (v[i] < v[minIdx]) minIdx = i;
    else if (v[i] > v[minIdx] + INSPIRATION_FALL_L) break;
  }
  const referenceVolumeL = v[minIdx];
  const maxInspirationIndex = startOfPause(sig, minIdx);

  // Walk forward: a fall of the volume below its running maximum is a breath in; it ends the
  // blow unless it is shallow and expiration then goes on beyond the earlier maximum.
  let maxIdx = p;
  let i = p + 1;
  let inspirationStart = -1;
  while (i < n) {
    if (v[i] > v[maxIdx]) {
      maxIdx = i;
      i++;
      continue;
    }
    if (v[maxIdx] - v[i] <= INSPIRATION_FALL_L) {
      i++;
      continue;
    }
    let resumedAt = -1;
    for (let j = i + 1; j < n; j++) {
      if (v[maxIdx] - v[j] > BLOW_ENDING_INSPIRATION_L) break;
      if (v[j] > v[maxIdx]) {
        resumedAt = j;
        break;
      }
    }
    if (resumedAt < 0) {
      inspirationStart = i;
      break;
    }
    i = resumedAt;
  }

  const maxVolumeL = v[maxIdx];
  const fvcL = maxVolumeL - referenceVolumeL;
  if (!(fvcL >= MIN_BLOW_VOLUME_L)) {
    throw new SpirometryInputError(
      'no-blow',
      `${label}: no forced expiration found: the largest expired volume is ${fvcL.toFixed(3)} L ` +
        `(a forced blow exhales at least ${MIN_BLOW_VOLUME_L.toFixed(1)} L)`,
      { file: label },
    );
  }
  let lastExpiratoryIndex = n - 1;
  let postBlowMinVolumeL: number | null = null;
  if (inspirationStart >= 0) {
    lastExpiratoryIndex = inspirationStart;
    while (lastExpiratoryIndex > maxIdx && v[lastExpiratoryIndex] < maxVolumeL - END_OF_EXPIRATION_TOLERANCE_L) {
      lastExpiratoryIndex--;
    }
    // The inspiration lasts until the volume rises again by more than noise.
    let low = inspirationStart;
    for (let j = inspirationStart + 1; j < n; j++) {
      if (v[j] < v[low]) low = j;
      else if (v[j] > v[low] + INSPIRATION_FALL_L) break;
    }
    postBlowMinVolumeL = v[low];
  }
  return {
    maxInspirationIndex,
    referenceVolumeL,
    peakFlowIndex: p,
    maxVolumeIndex: maxIdx,
    lastExpiratoryIndex,
    inspirationFollows: inspirationStart >= 0,
    postBlowMinVolumeL,
  };
}

/**
 * Where the inspiration before the blow ended: walking back from the lowest volume over the
 * pause at full inspiration, while the mean flow over the {@link PAUSE_FLOW_SPAN_S} before a
 * sample is not inspiratory and the volume stays within {@link INSPIRATION_FALL_L} of the
 * lowest (a drift, not another breath). Without a pause, about the lowest volume itself. The
 * end found lies within about the span of the true end of inspiration.
 */
function startOfPause(sig: DualSignal, minIdx: number): number {
  const v = sig.volumeL;
  const k = Math.max(1, Math.round(PAUSE_FLOW_SPAN_S * sig.sampleRateHz));
  const minChangeL = -PAUSE_MAX_INSPIRATORY_FLOW_L_PER_S * (k / sig.sampleRateHz);
  const ceilingL = v[minIdx] + INSPIRATION_FALL_L;
  let i = minIdx;
  while (i > 0) {
    // The volume change over the span ending at i - 1 (shorter at the start of the recording).
    const from = Math.max(0, i - 1 - k);
    const spanSamples = i - 1 - from;
    if (v[i - 1] > ceilingL) break;
    if (spanSamples > 0 && v[i - 1] - v[from] < (minChangeL * spanSamples) / k) break;
    i--;
  }
  return i;
}
