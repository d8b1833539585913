/**
 * An obstructive analytic test blow, our own construction from the ATS/ERS definitions (not a
 * published waveform), so that its exact answers follow in closed form: flow rises linearly to
 * PEF over the rise time tr, then the lung empties as two compartments, a fast one and a slow
 * one, each exponentially. With x = t - tr after the peak and s the slow compartment's share of
 * the volume R still to come at the peak:
 *   flow(t) = PEF t / tr                                          for 0 <= t <= tr
 *   flow(t) = A_f e^(-x/tau_f) + A_s e^(-x/tau_s)                 after,
 *   A_f tau_f = (1 - s) R,  A_s tau_s = s R,  A_f + A_s = PEF  =>  R = PEF / ((1 - s)/tau_f + s/tau_s)
 *   V(t) = PEF t^2 / (2 tr)                                       for 0 <= t <= tr
 *   V(t) = PEF tr / 2 + (1 - s) R (1 - e^(-x/tau_f)) + s R (1 - e^(-x/tau_s))   after.
 * Hence, as for the single-exponential curve (engine.md section 9): the line through the peak
 * (tr, PEF tr/2) with slope PEF meets V = 0 at time zero tr/2, and BEV = V(tr/2) = PEF tr/8;
 * FEVt = V(tr/2 + t); the FVC of a blow held from T on is V(T) (R + PEF tr/2 if it ran on);
 * the volume gained over the last second, once the window is past the peak, is
 *   G(t) = (1 - s) R e^(-x/tau_f) (e^(1/tau_f) - 1) + s R e^(-x/tau_s) (e^(1/tau_s) - 1),
 * decreasing in t, so the plateau time (G = 0.025 L, ATS/ERS 2019 from memory) is the root of a
 * monotone function; FEF at a fraction f exhaled is flow(t_f) with V(t_f) = f FVC, and
 * FEF25-75 = 0.5 FVC / (t_75 - t_25). The roots are found by bisection to 1e-12 s.
 */
import type { ClosedFormCurve } from './analytic-curve.js';

/** Shape of the two-compartment analytic blow. */
export interface TwoCompartmentBlow {
  readonly pefLPerS: number;
  readonly riseS: number;
  readonly fastTauS: number;
  readonly slowTauS: number;
  /** Share of the volume still to come at the peak that empties through the slow compartment. */
  readonly slowShare: number;
}

/** Volume still to come at the peak (L): R = PEF / ((1 - s)/tau_f + s/tau_s). */
export function twoCompartmentRemainingL(blow: TwoCompartmentBlow): number {
  return blow.pefLPerS / ((1 - blow.slowShare) / blow.fastTauS + blow.slowShare / blow.slowTauS);
}

/** Volume (L) `tS` after the onset (closed form above). */
export function twoCompartmentVolumeL(blow: TwoCompartmentBlow, tS: number): number {
  const { pefLPerS: pef, riseS: tr, fastTauS: tauF, slowTauS: tauS, slowShare: s } = blow;
  if (tS <= 0) return 0;
  if (tS <= tr) return (pef * tS * tS) / (2 * tr);
  const r = twoCompartmentRemainingL(blow);
  const x = tS - tr;
  return (pef * tr) / 2 + (1 - s) * r * (1 - Math.exp(-x / tauF)) + s * r * (1 - Math.exp(-x / tauS));
}

/** Flow (L/s) `tS` after the onset (closed form above). */
export function twoCompartmentFlowLPerS(blow: TwoCompartmentBlow, tS: number): number {
  const { pefLPerS: pef, riseS: tr, fastTauS: tauF, slowTauS: tauS, slowShare: s } = blow;
  if (tS <= 0) return 0;
  if (tS <= tr) return (pef * tS) / tr;
  const r = twoCompartmentRemainingL(blow);
  const x = tS - tr;
  return ((1 - s) * r * Math.exp(-x / tauF)) / tauF + (s * r * Math.exp(-x / tauS)) / tauS;
}

/** The blow as a closed-form curve for `recordClosedFormCurve`. */
export function twoCompartmentCurve(blow: TwoCompartmentBlow): ClosedFormCurve {
  return { volumeL: (tS) => twoCompartmentVolumeL(blow, tS), flowLPerS: (tS) => twoCompartmentFlowLPerS(blow, tS) };
}

/** Root of a decreasing function `g` on [lo, hi] (bisection). */
function decreasingRoot(g: (t: number) => number, lo: number, hi: number): number {
  let a = lo;
  let b = hi;
  for (let k = 0; k < 200 && b - a > 1e-12; k++) {
    const mid = (a + b) / 2;
    if (g(mid) > 0) a = mid;
    else b = mid;
  }
  return (a + b) / 2;
}

/** Exact values of the blow when the subject stops exhaling at `exhaleUntilS` after the onset (and stays still or the recording ends). */
export interface TwoCompartmentValues {
  readonly timeZeroS: number;
  readonly bevL: number;
  readonly fev1L: number;
  /** Null when the expiration ends before time zero + 6 s. */
  readonly fev6L: number | null;
  readonly fvcL: number;
  readonly fev1FvcRatio: number;
  readonly pefLPerS: number;
  readonly fef25LPerS: number;
  readonly fef50LPerS: number;
  readonly fef75LPerS: number;
  readonly fef2575LPerS: number;
  /** Time after the onset (s) at which the volume gained over the last `plateauWindowS` first falls to `plateauLimitL`; null if not before `exhaleUntilS`. */
  readonly plateauTimeS: number | null;
}

/** The closed-form answers (see the file comment) for a blow exhaled until `exhaleUntilS`. */
export function twoCompartmentValues(
  blow: TwoCompartmentBlow,
  exhaleUntilS: number,
  plateauWindowS = 1,
  plateauLimitL = 0.025,
): TwoCompartmentValues {
  const volume = (tS: number): number => twoCompartmentVolumeL(blow, Math.min(tS, exhaleUntilS));
  const timeZeroS = blow.riseS / 2;
  const fvcL = volume(exhaleUntilS);
  const timeAtFraction = (fraction: number): number => decreasingRoot((t) => fraction * fvcL - volume(t), 0, exhaleUntilS);
  const t25 = timeAtFraction(0.25);
  const t50 = timeAtFraction(0.5);
  const t75 = timeAtFraction(0.75);
  const fev1L = volume(timeZeroS + 1);
  const gain = (t: number): number => volume(t) - volume(t - plateauWindowS) - plateauLimitL;
  const from = blow.riseS + plateauWindowS;
  const plateauTimeS = gain(exhaleUntilS) <= 0 && gain(from) > 0 ? decreasingRoot(gain, from, exhaleUntilS) : null;
  return {
    timeZeroS,
    bevL: (blow.pefLPerS * blow.riseS) / 8,
    fev1L,
    fev6L: timeZeroS + 6 <= exhaleUntilS ? volume(timeZeroS + 6) : null,
    fvcL,
    fev1FvcRatio: fev1L / fvcL,
    pefLPerS: blow.pefLPerS,
    fef25LPerS: twoCompartmentFlowLPerS(blow, t25),
    fef50LPerS: twoCompartmentFlowLPerS(blow, t50),
    fef75LPerS: twoCompartmentFlowLPerS(blow, t75),
    fef2575LPerS: (0.5 * fvcL) / (t75 - t25),
    plateauTimeS,
  };
}
