import type { PredictedValue } from '../model.js';
import { LLN_Z } from '../reference/lms.js';

/**
 * Spirometric pattern after ERS/ATS 2022 (Stanojevic S, Kaminsky DA, Miller MR, et al.
 * ERS/ATS technical standard on interpretive strategies for routine lung function tests.
 * Eur Respir J 2022;60:2101499).
 * - `obstruction`: FEV1/FVC below its LLN (z < -1.645).
 * - `preserved-ratio-impaired`: FEV1/FVC normal but FEV1 or FVC below LLN; spirometry alone
 *   cannot tell restriction from this (it needs TLC) (from memory: the standard's PRISm).
 * - `normal`: none below LLN.
 * - `indeterminate`: a z-score needed for the decision is missing.
 */
export type SpirometricPattern = 'normal' | 'obstruction' | 'preserved-ratio-impaired' | 'indeterminate';

/** Severity of impairment from the FEV1 z-score (ERS/ATS 2022). */
export type ImpairmentSeverity = 'none' | 'mild' | 'moderate' | 'severe';

/** The result of interpreting one set of z-scores; a suggestion for the reader. */
export interface SpirometryInterpretation {
  readonly pattern: SpirometricPattern;
  /** Null when the pattern is normal or indeterminate, or the FEV1 z-score is missing. */
  readonly severity: ImpairmentSeverity | null;
  /** Plain-words summary, always ending with {@link REVIEW_CAUTION}. */
  readonly text: string;
}

/** Carried by every interpretation text. */
export const REVIEW_CAUTION =
  'This automated interpretation supports, and does not replace, review by qualified staff.';

/**
 * Severity bands of the FEV1 z-score (ERS/ATS 2022): mild -1.645 to -2.5, moderate -2.5 to
 * -4, severe below -4. A z-score of exactly -2.5 is mild and exactly -4 moderate, following
 * the published bands (-1.65 to -2.5; -2.51 to -4.0; < -4.1).
 */
export function severityFromFev1Z(fev1Z: number): ImpairmentSeverity {
  if (fev1Z >= LLN_Z) return 'none';
  if (fev1Z >= -2.5) return 'mild';
  if (fev1Z >= -4) return 'moderate';
  return 'severe';
}

/** z-scores to interpret; each may be missing. */
export interface InterpretationInput {
  readonly fev1Z: number | null | undefined;
  readonly fvcZ: number | null | undefined;
  readonly fev1FvcZ: number | null | undefined;
}

/** z-scores taken from predicted values computed with measured values. */
export function zScoresOf(values: {
  fev1?: PredictedValue;
  fvc?: PredictedValue;
  fev1Fvc?: PredictedValue;
}): InterpretationInput {
  return { fev1Z: values.fev1?.z, fvcZ: values.fvc?.z, fev1FvcZ: values.fev1Fvc?.z };
}

const formatZ = (z: number) => z.toFixed(2);

function isZ(z: number | null | undefined): z is number {
  return typeof z === 'number' && Number.isFinite(z);
}

/** Pattern, severity and text for one test, from its z-scores (ERS/ATS 2022). */
export function interpretSpirometry(input: InterpretationInput): SpirometryInterpretation {
  const { fev1Z, fvcZ, fev1FvcZ } = input;
  if (!isZ(fev1FvcZ)) {
    return {
      pattern: 'indeterminate',
      severity: null,
      text: `No FEV1/FVC z-score is available, so no pattern can be suggested. ${REVIEW_CAUTION}`,
    };
  }
  const severity = isZ(fev1Z) ? severityFromFev1Z(fev1Z) : null;
  const severityText = isZ(fev1Z)
    ? severity === 'none'
      ? `FEV1 z-score ${formatZ(fev1Z)} is within the normal range.`
      : `Severity by FEV1 z-score ${formatZ(fev1Z)}: ${severity}.`
    : 'No FEV1 z-score is available to grade severity.';
  if (fev1FvcZ < LLN_Z) {
    return {
      pattern: 'obstruction',
      severity,
      text: `FEV1/FVC z-score ${formatZ(fev1FvcZ)} is below the lower limit of normal (z -1.645): airflow obstruction. ${severityText} ${REVIEW_CAUTION}`,
    };
  }
  const low = [
    isZ(fev1Z) && fev1Z < LLN_Z ? `FEV1 (z ${formatZ(fev1Z)})` : null,
    isZ(fvcZ) && fvcZ < LLN_Z ? `FVC (z ${formatZ(fvcZ)})` : null,
  ].filter((part): part is string => part !== null);
  if (low.length > 0) {
    return {
      pattern: 'preserved-ratio-impaired',
      severity,
      text: `FEV1/FVC z-score ${formatZ(fev1FvcZ)} is normal but ${low.join(' and ')} below the lower limit of normal: preserved ratio with impaired spirometry; restriction can only be confirmed by measuring TLC. ${severityText} ${REVIEW_CAUTION}`,
    };
  }
  if (!isZ(fev1Z) || !isZ(fvcZ)) {
    return {
      pattern: 'indeterminate',
      severity: null,
      text: `FEV1/FVC z-score ${formatZ(fev1FvcZ)} is normal, but FEV1 or FVC has no z-score, so the test cannot be called normal. ${REVIEW_CAUTION}`,
    };
  }
  return {
    pattern: 'normal',
    severity: null,
    text: `FEV1/FVC, FEV1 and FVC are at or above their lower limits of normal. ${REVIEW_CAUTION}`,
  };
}
