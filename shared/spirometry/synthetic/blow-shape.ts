/**
 * Flow of one synthetic forced blow, our own physiological model: flow rises smoothly
 * (sin^2) to PEF over the rise time, then the lung empties as two compartments in
 * parallel (a fast one, and a slow one holding `slowFraction` of the volume left at
 * the peak), so that the curve reaches a plateau after about 6-12 s. Faults are
 * applied as changes of this flow in time.
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
}

/** Flow (L/s) of the blow `u` seconds after it starts. */
export type BlowFlow = (uS: number) => number;

/** sin^2 bump of the given width centred on 0; 0 outside. */
function bump(xS: number, widthS: number): number {
  if (Math.abs(xS) >= widthS / 2) return 0;
  const s = Math.cos((Math.PI * xS) / widthS);
  return s * s;
}

/** Fault timing, seconds after time zero (which is about half the rise time after the start). */
export const FAULT_TIMES_S = {
  earlyEnd: 2,
  earlyEndTaper: 0.5,
  glotticFirstSecond: 0.6,
  glotticLate: 1.5,
  glotticFall: 0.015,
  coughFirstSecond: 0.45,
  coughLate: 1.25,
  coughWidth: 0.08,
  inspiration: 1.5,
} as const;

/**
 * Builds the flow function of a blow. `slow-start` and `submaximal` change the shape
 * parameters; the other faults modify the flow in time.
 */
export function makeBlowFlow(shape: BlowShape): BlowFlow {
  const has = (fault: BlowFault): boolean => shape.faults.includes(fault);
  let pef = shape.pefLPerS;
  let fvc = shape.fvcL;
  let tr = shape.riseTimeS;
  if (has('slow-start')) {
    tr = 0.6;
    pef *= 0.85;
  }
  if (has('submaximal')) {
    pef *= 0.7;
    fvc *= 0.97;
  }
  // Late peak: a quick rise to 85 % of PEF, then a slow climb to PEF over 0.25 s.
  const climbS = has('late-peak') ? 0.25 : 0;
  const riseFraction = has('late-peak') ? 0.85 : 1;
  const peakTimeS = tr + climbS;
  const volumeAtPeakL = (riseFraction * pef * tr) / 2 + ((1 + riseFraction) / 2) * pef * climbS;
  const remainingL = fvc - volumeAtPeakL;
  const w = 1 - shape.slowFraction;
  const slowRate = (1 - w) / shape.slowTauS;
  if (!(pef / remainingL > slowRate) || remainingL <= 0) {
    throw new RangeError(`blow shape cannot reach PEF ${pef} L/s with FVC ${fvc} L`);
  }
  const fastTauS = w / (pef / remainingL - slowRate);
  const base: BlowFlow = (u) => {
    if (u < 0) return 0;
    if (u < tr) {
      const s = Math.sin((Math.PI * u) / (2 * tr));
      return riseFraction * pef * s * s;
    }
    if (u < peakTimeS) return pef * (riseFraction + ((1 - riseFraction) * (u - tr)) / climbS);
    const x = u - peakTimeS;
    return remainingL * ((w / fastTauS) * Math.exp(-x / fastTauS) + slowRate * Math.exp(-x / shape.slowTauS));
  };

  // Time zero of the undisturbed shape: line through the peak with slope PEF.
  const t0 = peakTimeS - volumeAtPeakL / pef;
  const T = FAULT_TIMES_S;
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
  for (const [fault, at, depth] of [
    ['cough-first-second', T.coughFirstSecond, 0.6],
    ['cough-late', T.coughLate, 0.7],
  ] as const) {
    if (!has(fault)) continue;
    const centre = t0 + at;
    modifiers.push((u, flow) => flow * (1 - depth * bump(u - centre, T.coughWidth)));
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
