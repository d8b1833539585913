import { type DualSignal, SpirometryInputError } from './model.js';

/** Where the forced blow lies in a recording; all indices are sample indices. */
export interface ForcedBlow {
  /** Point of maximal inspiration: the first sample at (within {@link MAX_INSPIRATION_TIE_L} of) the lowest volume before the peak. */
  readonly maxInspirationIndex: number;
  /** Volume (L, file scale) at maximal inspiration; every reported volume is relative to it. */
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
/** Samples within this volume (L) of the lowest one count as the same maximal inspiration (a pause at full inspiration) [practice]. */
export const MAX_INSPIRATION_TIE_L = 0.005;
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
  let maxInspirationIndex = minIdx;
  while (maxInspirationIndex > 0 && v[maxInspirationIndex - 1] <= v[minIdx] + MAX_INSPIRATION_TIE_L) maxInspirationIndex--;
  const referenceVolumeL = v[minIdx];

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
