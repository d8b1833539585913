/**
 * The LMS method (Cole & Green 1992) as used by the GLI equations: a measurement y is
 * described by its median M, coefficient of variation S and skewness (Box-Cox power) L.
 * Formulas as in Quanjer et al., Eur Respir J 2012;40:1324-43.
 */

/** The three LMS quantities at one age and height. */
export interface Lms {
  readonly l: number;
  readonly m: number;
  readonly s: number;
}

/** The z-score that bounds the lower 5 % (one-sided), used for LLN and ULN. */
export const LLN_Z = -1.645;

/** Below this |L| the Box-Cox power is treated as its logarithmic limit (L -> 0). */
const L_ZERO_TOLERANCE = 1e-9;

/** z-score of measurement y: ((y/M)^L - 1)/(L S), or ln(y/M)/S when L is 0. Null for y <= 0. */
export function lmsZScore(lms: Lms, y: number): number | null {
  if (!(y > 0) || !Number.isFinite(y)) return null;
  const ratio = y / lms.m;
  if (Math.abs(lms.l) < L_ZERO_TOLERANCE) return Math.log(ratio) / lms.s;
  return (Math.pow(ratio, lms.l) - 1) / (lms.l * lms.s);
}

/**
 * The value that sits at z-score z: M (1 + z L S)^(1/L), or M exp(z S) when L is 0.
 * When 1 + z L S <= 0 the Box-Cox transform has no value there: 0 for L > 0 (the
 * distribution's lower end) and null for L < 0 (unbounded above).
 */
export function lmsValueAtZ(lms: Lms, z: number): number | null {
  if (Math.abs(lms.l) < L_ZERO_TOLERANCE) return lms.m * Math.exp(z * lms.s);
  const base = 1 + z * lms.l * lms.s;
  if (base <= 0) return lms.l > 0 ? 0 : null;
  return lms.m * Math.pow(base, 1 / lms.l);
}

/** Lower limit of normal: the value at z = -1.645. */
export function lmsLowerLimit(lms: Lms): number | null {
  return lmsValueAtZ(lms, LLN_Z);
}

/** Upper limit of normal: the value at z = +1.645. */
export function lmsUpperLimit(lms: Lms): number | null {
  return lmsValueAtZ(lms, -LLN_Z);
}

/** Percent predicted: 100 y / M. */
export function percentPredicted(predicted: number, y: number): number {
  return (100 * y) / predicted;
}
