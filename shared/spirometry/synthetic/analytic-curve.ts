/**
 * Our analytic test blow, built from the ATS/ERS definitions so that its exact answers
 * follow in closed form: flow rises linearly to PEF over the rise time tr, then decays
 * exponentially with time constant tau.
 *   V(t) = PEF t^2 / (2 tr)                               for 0 <= t <= tr
 *   V(t) = PEF tr / 2 + PEF tau (1 - exp(-(t - tr)/tau))  after
 * Hence FVC = PEF (tr/2 + tau); the line through the peak with slope PEF meets V = 0 at
 * time zero tr/2, where BEV = PEF tr/8; after the peak the flow is (FVC - V)/tau.
 */
import type { Recording, SignalKind } from '../model.js';

/** Shape of the analytic blow. */
export interface AnalyticBlow {
  readonly pefLPerS: number;
  readonly riseS: number;
  readonly tauS: number;
}

/** Volume (L) `tS` seconds after the onset of the analytic blow (0 before it). */
export function analyticVolumeL(blow: AnalyticBlow, tS: number): number {
  const { pefLPerS: pef, riseS: tr, tauS: tau } = blow;
  if (tS <= 0) return 0;
  if (tS <= tr) return (pef * tS * tS) / (2 * tr);
  return (pef * tr) / 2 + pef * tau * (1 - Math.exp(-(tS - tr) / tau));
}

/** Flow (L/s) `tS` seconds after the onset of the analytic blow (0 before it). */
export function analyticFlowLPerS(blow: AnalyticBlow, tS: number): number {
  const { pefLPerS: pef, riseS: tr, tauS: tau } = blow;
  if (tS <= 0) return 0;
  if (tS <= tr) return (pef * tS) / tr;
  return pef * Math.exp(-(tS - tr) / tau);
}

/** How the analytic blow is recorded. Times are seconds after the onset of the blow. */
export interface AnalyticRecordingSpec {
  readonly rateHz: number;
  readonly signal: SignalKind;
  /** Still lead-in before the onset (s). */
  readonly leadInS: number;
  /** The recording stops this long after the onset (s). */
  readonly durationS: number;
  /** From this time on the subject has stopped exhaling and stays on the mouthpiece: volume held, flow 0. */
  readonly holdFromS?: number;
  /** From this time on the subject breathes in at `breathInLPerS` for `breathInS`, then is still. */
  readonly breathInFromS?: number;
  readonly breathInLPerS?: number;
  readonly breathInS?: number;
  readonly label?: string;
}

/** Any blow given in closed form: volume (L) and flow (L/s) `tS` seconds after its onset (0 before it). */
export interface ClosedFormCurve {
  readonly volumeL: (tS: number) => number;
  readonly flowLPerS: (tS: number) => number;
}

/** Volume (L) and flow (L/s) of the recorded blow at `tS` after the onset, with its hold and breath in. */
function recordedAt(curve: ClosedFormCurve, spec: AnalyticRecordingSpec, tS: number): { volumeL: number; flowLPerS: number } {
  const hold = spec.holdFromS ?? Infinity;
  const breathIn = spec.breathInFromS ?? Infinity;
  const exhaleUntilS = Math.min(hold, breathIn);
  if (tS <= exhaleUntilS) return { volumeL: curve.volumeL(tS), flowLPerS: curve.flowLPerS(tS) };
  const heldL = curve.volumeL(exhaleUntilS);
  if (tS <= breathIn) return { volumeL: heldL, flowLPerS: 0 };
  const rateLPerS = spec.breathInLPerS ?? 3;
  const inS = Math.min(tS - breathIn, spec.breathInS ?? 1.5);
  return { volumeL: heldL - rateLPerS * inS, flowLPerS: tS - breathIn <= (spec.breathInS ?? 1.5) ? -rateLPerS : 0 };
}

/** Samples the analytic blow as a recording starting at 0 s, the onset after the lead-in. */
export function recordAnalyticBlow(blow: AnalyticBlow, spec: AnalyticRecordingSpec): Recording {
  const curve: ClosedFormCurve = { volumeL: (tS) => analyticVolumeL(blow, tS), flowLPerS: (tS) => analyticFlowLPerS(blow, tS) };
  const label = spec.label ?? `analytic PEF ${blow.pefLPerS} tr ${blow.riseS} tau ${blow.tauS} at ${spec.rateHz} Hz (${spec.signal})`;
  return recordClosedFormCurve(curve, { ...spec, label });
}

/** Samples any closed-form blow as a recording starting at 0 s, the onset after the lead-in. */
export function recordClosedFormCurve(curve: ClosedFormCurve, spec: AnalyticRecordingSpec): Recording {
  const n = Math.round((spec.leadInS + spec.durationS) * spec.rateHz) + 1;
  const values = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const point = recordedAt(curve, spec, i / spec.rateHz - spec.leadInS);
    values[i] = spec.signal === 'volume' ? point.volumeL : point.flowLPerS;
  }
  return { signal: spec.signal, sampleRateHz: spec.rateHz, startTimeS: 0, values, label: spec.label ?? `closed-form curve at ${spec.rateHz} Hz (${spec.signal})` };
}

/**
 * Time after the onset (s) at which the volume gained over the preceding `windowS` first
 * falls to `limitL`. For t - windowS >= tr, V(t) - V(t - w) = PEF tau e^{-(t - tr)/tau} (e^{w/tau} - 1),
 * so t = tr + tau ln(PEF tau (e^{w/tau} - 1) / limit). Null when that point comes before the
 * window has left the rise (the formula does not hold there).
 */
export function analyticPlateauTimeS(blow: AnalyticBlow, windowS: number, limitL: number): number | null {
  const { pefLPerS: pef, riseS: tr, tauS: tau } = blow;
  const tS = tr + tau * Math.log((pef * tau * (Math.exp(windowS / tau) - 1)) / limitL);
  return tS - windowS >= tr ? tS : null;
}
