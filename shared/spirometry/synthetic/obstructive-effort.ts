/**
 * Obstructive (COPD-like) efforts for tests and demos: the two-compartment blow of
 * `blow-shape.ts` with a large, slow compartment. Our own model, not a published
 * waveform. Ranges, chosen to look like moderate COPD on a flow-volume curve (common
 * practice, from memory of clinical curves): PEF 3-6 L/s, FVC 2-4 L, FEV1/FVC 0.45-0.65,
 * a quick peak then a scooped (concave) descent, a plateau after 8-17 s (beyond 15 s the
 * FET criterion ends the expiration instead), and sometimes a slower rise, as in older subjects.
 *
 * Closed forms of the undisturbed shape (sin^2 rise to PEF over tr, then, x = t - tr after
 * the peak, flow R [(1 - s)/tau_f e^(-x/tau_f) + s/tau_s e^(-x/tau_s)] with R = FVC - PEF tr/2):
 *   time zero  t0 = tr/2 (the line through the peak with slope PEF; V(tr) = PEF tr/2),
 *   BEV        = PEF tr (1/4 - 1/(2 pi)),
 *   V(t)       = PEF tr/2 + R [(1 - s)(1 - e^(-x/tau_f)) + s (1 - e^(-x/tau_s))],
 *   gain over the last second (t - 1 >= tr): R [(1 - s) e^(-x/tau_f)(e^(1/tau_f) - 1) + s e^(-x/tau_s)(e^(1/tau_s) - 1)].
 */
import type { EffortSpec } from './curve-generator.js';
import { SeededRandom } from './seeded-random.js';

/** Shape parameters of one obstructive blow (no faults). */
export interface ObstructiveShape {
  readonly pefLPerS: number;
  readonly fvcL: number;
  readonly riseTimeS: number;
  readonly slowFraction: number;
  readonly slowTauS: number;
}

/** What the closed forms give for a shape. */
export interface ObstructiveShapeValues {
  readonly timeZeroS: number;
  readonly bevL: number;
  readonly fev1L: number;
  /** FVC if the blow ran to its end (L). */
  readonly fvcL: number;
  readonly fev1FvcRatio: number;
  /** Time after the start of the blow (s) at which the volume gained over the last 1 s first falls to 0.025 L. */
  readonly plateauTimeS: number;
  readonly fastTauS: number;
}

/** Plateau criterion used to place the end of the recording: 0.025 L over 1 s (ATS/ERS 2019, from memory). */
const PLATEAU_LIMIT_L = 0.025;

/** Volume (L) of the undisturbed shape `tS` after the start of the blow (closed form above). */
export function obstructiveVolumeL(shape: ObstructiveShape, tS: number): number {
  const { pefLPerS: pef, riseTimeS: tr, slowFraction: s, slowTauS: tauS } = shape;
  if (tS <= 0) return 0;
  if (tS <= tr) {
    // Integral of PEF sin^2(pi u / (2 tr)) = PEF (u/2 - tr sin(pi u / tr) / (2 pi)).
    return pef * (tS / 2 - (tr * Math.sin((Math.PI * tS) / tr)) / (2 * Math.PI));
  }
  const remainingL = shape.fvcL - (pef * tr) / 2;
  const tauF = fastTauS(shape);
  const x = tS - tr;
  return (pef * tr) / 2 + remainingL * ((1 - s) * (1 - Math.exp(-x / tauF)) + s * (1 - Math.exp(-x / tauS)));
}

/** Time constant of the fast compartment that makes the flow at the peak equal PEF. */
function fastTauS(shape: ObstructiveShape): number {
  const remainingL = shape.fvcL - (shape.pefLPerS * shape.riseTimeS) / 2;
  return (1 - shape.slowFraction) / (shape.pefLPerS / remainingL - shape.slowFraction / shape.slowTauS);
}

/** The closed-form values of a shape (see the file comment). */
export function obstructiveShapeValues(shape: ObstructiveShape): ObstructiveShapeValues {
  const { pefLPerS: pef, riseTimeS: tr, slowFraction: s, slowTauS: tauS } = shape;
  const tauF = fastTauS(shape);
  const remainingL = shape.fvcL - (pef * tr) / 2;
  const timeZeroS = tr / 2;
  const fev1L = obstructiveVolumeL(shape, timeZeroS + 1);
  const gainL = (tS: number): number => {
    const x = tS - tr;
    return remainingL * ((1 - s) * Math.exp(-x / tauF) * (Math.exp(1 / tauF) - 1) + s * Math.exp(-x / tauS) * (Math.exp(1 / tauS) - 1));
  };
  // The gain falls monotonically once the window has left the rise: bisection.
  let lo = tr + 1;
  let hi = 200;
  for (let k = 0; k < 100; k++) {
    const mid = (lo + hi) / 2;
    if (gainL(mid) > PLATEAU_LIMIT_L) lo = mid;
    else hi = mid;
  }
  return {
    timeZeroS,
    bevL: pef * tr * (0.25 - 1 / (2 * Math.PI)),
    fev1L,
    fvcL: shape.fvcL,
    fev1FvcRatio: fev1L / shape.fvcL,
    plateauTimeS: hi,
    fastTauS: tauF,
  };
}

/** Ranges the obstructive shapes are drawn from (see the file comment). */
export const OBSTRUCTIVE_RANGES = {
  pefLPerS: [3, 6],
  fvcL: [2, 4],
  /** PEF (L/s) per litre of FVC: a small lung does not blow 6 L/s. */
  pefPerFvc: [1.1, 2.2],
  fev1FvcRatio: [0.45, 0.65],
  slowFraction: [0.5, 0.75],
  slowTauS: [2.5, 6],
  /** Rise time (s); the upper end is an older subject's slower rise. */
  riseTimeS: [0.06, 0.22],
} as const;

/**
 * A clean effort's BEV is kept under this share of the ATS/ERS 2019 limit (the greater of 5 %
 * of FVC and 0.100 L, from memory), so that a slow rise never breaks the rule by construction.
 */
const CLEAN_BEV_SHARE_OF_LIMIT = 0.6;

/**
 * Draws an obstructive shape, deterministic for a given random source: uniform in the ranges,
 * rejected until PEF/FVC and FEV1/FVC (closed form) fall in their ranges; the rise time is capped so that
 * BEV stays well under its limit.
 */
export function drawObstructiveShape(random: SeededRandom): ObstructiveShape {
  const r = OBSTRUCTIVE_RANGES;
  for (let attempt = 0; attempt < 1000; attempt++) {
    const pefLPerS = random.uniform(r.pefLPerS[0], r.pefLPerS[1]);
    const fvcL = random.uniform(r.fvcL[0], r.fvcL[1]);
    if (pefLPerS < r.pefPerFvc[0] * fvcL || pefLPerS > r.pefPerFvc[1] * fvcL) continue;
    const bevLimitL = Math.max(0.1, 0.05 * fvcL);
    const maxRiseS = Math.min(r.riseTimeS[1], (CLEAN_BEV_SHARE_OF_LIMIT * bevLimitL) / (pefLPerS * (0.25 - 1 / (2 * Math.PI))));
    const shape: ObstructiveShape = {
      pefLPerS,
      fvcL,
      riseTimeS: random.uniform(r.riseTimeS[0], maxRiseS),
      slowFraction: random.uniform(r.slowFraction[0], r.slowFraction[1]),
      slowTauS: random.uniform(r.slowTauS[0], r.slowTauS[1]),
    };
    const remainingL = fvcL - (pefLPerS * shape.riseTimeS) / 2;
    if (!(pefLPerS / remainingL > shape.slowFraction / shape.slowTauS)) continue;
    const ratio = obstructiveShapeValues(shape).fev1FvcRatio;
    if (ratio >= r.fev1FvcRatio[0] && ratio <= r.fev1FvcRatio[1]) return shape;
  }
  throw new Error('no obstructive shape in range after 1000 draws');
}

/** FET criterion (ATS/ERS 2019, from memory): an expiration of 15 s or more has ended. */
const LONG_EXPIRATION_S = 15;

/**
 * Length of the blow (s) so that the recording shows its end: 1.5-3 s past the plateau, or,
 * when the plateau would come after 15 s of expiration, 16-17 s (the FET criterion ends it).
 */
export function obstructiveBlowDurationS(shape: ObstructiveShape, random: SeededRandom): number {
  const values = obstructiveShapeValues(shape);
  const plateauFetS = values.plateauTimeS - values.timeZeroS;
  if (plateauFetS < LONG_EXPIRATION_S - 0.5) return values.plateauTimeS + random.uniform(1.5, 3);
  return values.timeZeroS + LONG_EXPIRATION_S + random.uniform(1, 2);
}

/** An effort spec with its obstructive shape and blow length spelled out. */
export type ObstructiveEffortSpec = EffortSpec & ObstructiveShape & { readonly blowDurationS: number };

/**
 * A whole obstructive effort spec for `generateEffort`, deterministic for `seed`: a drawn
 * shape, a blow long enough to show its end, modest noise (flow 0.005-0.03 L/s per sample,
 * volume 0.1-0.4 mL), cardiogenic oscillation on half of them; `overrides` win.
 */
export function obstructiveEffortSpec(seed: number, overrides: Partial<EffortSpec> = {}): ObstructiveEffortSpec {
  const random = new SeededRandom(seed ^ 0x5bd1e995);
  const shape = drawObstructiveShape(random);
  return {
    ...shape,
    blowDurationS: obstructiveBlowDurationS(shape, random),
    flowNoiseLPerS: random.uniform(0.005, 0.03),
    volumeNoiseL: random.uniform(0.0001, 0.0004),
    cardiogenicLPerS: random.next() < 0.5 ? random.uniform(0.02, 0.06) : 0,
    ...overrides,
  };
}
