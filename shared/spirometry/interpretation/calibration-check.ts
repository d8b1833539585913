/**
 * Calibration verification with a syringe (ATS/ERS 2019: a 3.00 L syringe must read within
 * +/-3 %, i.e. 2.91-3.09 L: 2.5 % for the device plus 0.5 % for the syringe).
 */

/** Nominal syringe volume (L) of the standard check. */
export const SYRINGE_VOLUME_L = 3;
/** Accepted deviation of the reading from the syringe volume, in percent. */
export const CALIBRATION_TOLERANCE_PERCENT = 3;

/** Comparisons at the limits ignore binary floating-point noise (3 x 0.97 is 2.9099999...). */
const EPSILON = 1e-9;

/** Result of one syringe check. */
export interface CalibrationCheck {
  /** Whether the reading is within tolerance. */
  readonly passed: boolean;
  readonly measuredVolumeL: number;
  readonly syringeVolumeL: number;
  /** Signed deviation, percent of the syringe volume. */
  readonly errorPercent: number;
  readonly lowerLimitL: number;
  readonly upperLimitL: number;
  readonly message: string;
}

/** Checks a syringe reading against the syringe volume and tolerance (defaults 3.00 L, 3 %). */
export function checkCalibration(
  measuredVolumeL: number,
  options: { readonly syringeVolumeL?: number; readonly tolerancePercent?: number } = {},
): CalibrationCheck {
  const syringeVolumeL = options.syringeVolumeL ?? SYRINGE_VOLUME_L;
  const tolerancePercent = options.tolerancePercent ?? CALIBRATION_TOLERANCE_PERCENT;
  if (!(syringeVolumeL > 0) || !(tolerancePercent >= 0)) {
    throw new RangeError('Syringe volume must be positive and tolerance zero or more.');
  }
  const lowerLimitL = syringeVolumeL * (1 - tolerancePercent / 100);
  const upperLimitL = syringeVolumeL * (1 + tolerancePercent / 100);
  const errorPercent = ((measuredVolumeL - syringeVolumeL) * 100) / syringeVolumeL;
  const passed = Number.isFinite(measuredVolumeL) && Math.abs(errorPercent) <= tolerancePercent + EPSILON;
  const range = `${lowerLimitL.toFixed(2)}-${upperLimitL.toFixed(2)} L`;
  const message = Number.isFinite(measuredVolumeL)
    ? `Syringe ${syringeVolumeL.toFixed(2)} L read ${measuredVolumeL.toFixed(3)} L (${errorPercent >= 0 ? '+' : ''}${errorPercent.toFixed(1)} %); accepted ${range}: ${passed ? 'passed' : 'failed'}.`
    : `Syringe reading is missing; accepted ${range}: failed.`;
  return { passed, measuredVolumeL, syringeVolumeL, errorPercent, lowerLimitL, upperLimitL, message };
}
