/**
 * Flow of one synthetic forced blow, our own physiological model.
 *
 * Rise: flow rises smoothly (sin^2) to PEF over the rise time, so that time zero by
 * back-extrapolation falls at half the rise time.
 *
 * Emptying: the lung empties as two compartments in parallel, each a single-exponential
 * emptying, from the volume R left at the peak: a fast one holding (1 - s) R and a slow one
 * holding s R (s = `slowFraction`):
 *   flow(x) = R [ (1 - s)/tau_f e^(-x/tau_f) + s/tau_s e^(-x/tau_s) ],  x = time after the peak,
 * with tau_f chosen so that flow(0) = PEF. A small s and a short tau_s give a healthy
 * curve (plateau after 4-8 s). Airflow obstruction is a large slow share and a long slow
 * time constant (s 0.5-0.75, tau_s 2.5-6 s): a quick, sharp peak, then a concave (scooped)
 * flow-volume curve and a long, slow emptying (FEV1/FVC 0.45-0.65, plateau after 8-17 s);
 * see `obstructive-effort.ts` for the ranges we draw from. Faults are changes of this flow
 * in time (or of its shape parameters), each scaled so that it shows on small, slow lungs
 * as well as on healthy ones.
 */

/** Faults the generator can build into a blow, each meant to show one finding. */
export type BlowFault =
  | 'slow-start'
  | 'late-peak'
  | 'early-end'
  | 'cough-first-second'
  | 'cough-late'
  | 'glottic-first-second'
  | 'glottic-late'
  | 'inspiration-during-blow'
  | 'submaximal';

/** When faults happen, seconds after time zero (which is about half the rise time after the start). */
export interface FaultTimes {
  /** Early end: flow tapers to zero from this time ... */
  readonly earlyEnd: number;
  /** ... over this long (s); the subject breathes in soon after. */
  readonly earlyEndTaper: number;
  readonly glotticFirstSecond: number;
  readonly glotticLate: number;
  /** A glottic closure stops the flow over this long (s). */
  readonly glotticFall: number;
  readonly coughFirstSecond: number;
  readonly coughLate: number;
  /** Width of the cough's flow dip (s); the burst that follows is twice as wide. */
  readonly coughWidth: number;
  readonly inspiration: number;
}

/** Default fault timing (s after time zero). */
export const FAULT_TIMES_S: FaultTimes = {
  earlyEnd: 2,
  earlyEndTaper: 0.5,
  glotticFirstSecond: 0.6,
  glotticLate: 1.5,
  glotticFall: 0.015,
  coughFirstSecond: 0.45,
  coughLate: 1.25,
  coughWidth: 0.08,
  inspiration: 1.5,
};

/** Shape of one blow. */
export interface BlowShape {
  readonly pefLPerS: number;
  /** Volume the blow would empty if it ran to its end (L). */
  readonly fvcL: number;
  readonly riseTimeS: number;
  /** Share of the volume left at the peak that empties through the slow compartment. */
  readonly slowFraction: number;
  readonly slowTauS: number;
  readonly faults: readonly BlowFault[];
  /** Changes to {@link FAULT_TIMES_S}. */
  readonly faultTimesS?: Partial<FaultTimes>;
}

/** Flow (L/s) of the blow `u` seconds after it starts. */
export type BlowFlow = (uS: number) => number;

/** sin^2 bump of the given width centred on 0; 0 outside. */
function bump(xS: number, widthS: number): number {
  if (Math.abs(xS) >= widthS / 2) return 0;
  const s = Math.cos((Math.PI * xS) / widthS);
  return s * s;
}

/** Time from time zero to PEF (s) of a `late-peak` blow: well past the common-practice 0.15 s. */
const LATE_PEAK_TIME_TO_PEF_S = 0.22;
/** Soft start: the shoulder of a slow start flows at this fraction of PEF. */
const SLOW_START_SHOULDER_FRACTION = 0.25;
/** The shoulder reaches its flow over this long (s). */
const SLOW_START_ONSET_S = 0.05;
/**
 * A slow start is built to give about this multiple of the ATS/ERS 2019 BEV limit (the greater
 * of 5 % of FVC and 0.100 L, from memory), so that it shows on every lung size.
 */
const SLOW_START_BEV_MULTIPLE = 2;

/**
 * Builds the flow function of a blow. `slow-start` and `submaximal` change the shape;
 * the other faults modify the flow in time.
 *
 * `slow-start` is a soft blow at a quarter of PEF (a shoulder of length d) before the blast.
 * With q = PEF/4 and a sin^2 rise from q to PEF over tr, the line through the peak with
 * slope PEF meets zero at t0 = 0.75 (d + tr/2), inside the shoulder when d >= 1.5 tr, so
 * BEV ~ q t0 = 0.1875 PEF (d + tr/2); d is solved for twice the BEV limit.
 * A cough is the glottis closing (flow dips by 90 % over `coughWidth`) and an expulsive burst
 * after it that returns the volume held back, as coughs look on a flow-time curve.
 */
export function makeBlowFlow(shape: BlowShape): BlowFlow {
  const has = (fault: BlowFault): boolean => shape.faults.includes(fault);
  const T: FaultTimes = { ...FAULT_TIMES_S, ...shape.faultTimesS };
  let pef = shape.pefLPerS;
  let fvc = shape.fvcL;
  const tr = shape.riseTimeS;
  if (has('submaximal')) {
    pef *= 0.7;
    fvc *= 0.97;
  }
  let shoulderS = 0;
  let shoulderFlow = 0;
  if (has('slow-start')) {
    pef *= 0.9;
    shoulderFlow = SLOW_START_SHOULDER_FRACTION * pef;
    const targetBevL = SLOW_START_BEV_MULTIPLE * Math.max(0.1, 0.05 * fvc);
    shoulderS = Math.max(1.5 * tr, targetBevL / (0.75 * shoulderFlow) - tr / 2);
  }
  // Late peak: a quick rise to 90 % of PEF, then a slow climb to PEF. Time to PEF from time zero
  // is the volume at the peak over PEF (the line through the peak with slope PEF), here
  // 0.45 tr + 0.95 climb (no shoulder): the climb is solved for LATE_PEAK_TIME_TO_PEF_S. The quick
  // rise keeps BEV small, so that the late peak shows alone.
  const riseFraction = has('late-peak') ? 0.9 : 1;
  const climbS = has('late-peak') ? Math.max(0.05, (LATE_PEAK_TIME_TO_PEF_S - 0.45 * tr) / 0.95) : 0;
  const riseStartS = shoulderS;
  const peakTimeS = riseStartS + tr + climbS;
  // Volume of the shoulder (its sin^2 onset holds back half the onset), the rise and the climb.
  const shoulderVolumeL = shoulderS > 0 ? shoulderFlow * (shoulderS - SLOW_START_ONSET_S / 2) : 0;
  const riseTop = riseFraction * pef;
  const volumeAtPeakL = shoulderVolumeL + ((shoulderFlow + riseTop) * tr) / 2 + ((1 + riseFraction) / 2) * pef * climbS;
  const remainingL = fvc - volumeAtPeakL;
  const w = 1 - shape.slowFraction;
  const slowRate = (1 - w) / shape.slowTauS;
  if (!(pef / remainingL > slowRate) || remainingL <= 0) {
    throw new RangeError(`blow shape cannot reach PEF ${pef} L/s with FVC ${fvc} L`);
  }
  const fastTauS = w / (pef / remainingL - slowRate);
  const base: BlowFlow = (u) => {
    if (u < 0) return 0;
    if (u < riseStartS) {
      const s = u < SLOW_START_ONSET_S ? Math.sin((Math.PI * u) / (2 * SLOW_START_ONSET_S)) : 1;
      return shoulderFlow * s * s;
    }
    if (u < riseStartS + tr) {
      const s = Math.sin((Math.PI * (u - riseStartS)) / (2 * tr));
      return shoulderFlow + (riseTop - shoulderFlow) * s * s;
    }
    if (u < peakTimeS) return pef * (riseFraction + ((1 - riseFraction) * (u - riseStartS - tr)) / climbS);
    const x = u - peakTimeS;
    return remainingL * ((w / fastTauS) * Math.exp(-x / fastTauS) + slowRate * Math.exp(-x / shape.slowTauS));
  };

  // Time zero of the undisturbed shape: line through the peak with slope PEF.
  const t0 = peakTimeS - volumeAtPeakL / pef;
  const modifiers: ((u: number, flow: number) => number)[] = [];
  if (has('early-end')) {
    const start = t0 + T.earlyEnd;
    modifiers.push((u, flow) => (u < start ? flow : u > start + T.earlyEndTaper ? 0 : flow * bump(u - start, 2 * T.earlyEndTaper)));
  }
  for (const [fault, at] of [
    ['glottic-first-second', T.glotticFirstSecond],
    ['glottic-late', T.glotticLate],
  ] as const) {
    if (!has(fault)) continue;
    const start = t0 + at;
    modifiers.push((u, flow) => (u < start ? flow : u > start + T.glotticFall ? 0 : flow * (1 - (u - start) / T.glotticFall)));
  }
  for (const [fault, at] of [
    ['cough-first-second', T.coughFirstSecond],
    ['cough-late', T.coughLate],
  ] as const) {
    if (!has(fault)) continue;
    const centre = t0 + at;
    const depth = 0.9;
    const width = T.coughWidth;
    // The burst (twice as wide, so half as high per unit of volume) returns what the dip held back:
    // the integral of depth * flow * bump over the dip is about depth * flow(centre) * width / 2.
    const burstCentre = centre + 1.5 * width;
    const burstPeakLPerS = (depth * base(centre) * width) / (2 * width);
    modifiers.push((u, flow) => flow * (1 - depth * bump(u - centre, width)) + burstPeakLPerS * bump(u - burstCentre, 2 * width));
  }
  if (has('inspiration-during-blow')) {
    // Breathe in 0.3 L over 0.3 s, then breathe it out again over the next 0.6 s.
    const start = t0 + T.inspiration;
    modifiers.push((u, flow) => flow - 2 * bump(u - start - 0.15, 0.3) + 1 * bump(u - start - 0.6, 0.6));
  }
  return (u) => {
    let flow = base(u);
    for (const modify of modifiers) flow = modify(u, flow);
    return flow;
  };
}
