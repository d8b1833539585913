import type { Demographics, EquationsId, Ethnicity, PredictedValue, ReferenceParameter } from '../model.js';

/** One set of reference equations, ready to compute predicted values. */
export interface ReferenceEquations {
  readonly id: EquationsId;
  /** Short human label, e.g. "GLI-2012". */
  readonly label: string;
  /** The publication the equations come from. */
  readonly source: string;
  /** Parameters the set covers; others give a null value with a reason. */
  readonly parameters: readonly ReferenceParameter[];
  /** Ethnic groups the set distinguishes; null when it has no ethnic terms. */
  readonly ethnicities: readonly Ethnicity[] | null;
  /** Predicted, LLN, ULN and, with a measured value, z-score and percent predicted. */
  predict(demographics: Demographics, parameter: ReferenceParameter, measured?: number): PredictedValue;
}

/** Display names of the parameters, for reasons and messages. */
export const PARAMETER_LABELS: Readonly<Record<ReferenceParameter, string>> = {
  fev1: 'FEV1',
  fvc: 'FVC',
  fev1Fvc: 'FEV1/FVC',
  fef2575: 'FEF25-75',
  fef75: 'FEF75',
  pef: 'PEF',
  fev6: 'FEV6',
};

/** A value with nothing computed and the reason why. */
export function unavailable(reason: string): PredictedValue {
  return { predicted: null, lln: null, uln: null, z: null, percentPredicted: null, reason };
}

/** Predicted values for every parameter that has a measured value or that the set covers. */
export function predictAll(
  equations: ReferenceEquations,
  demographics: Demographics,
  measured: Partial<Record<ReferenceParameter, number>> = {},
): Partial<Record<ReferenceParameter, PredictedValue>> {
  const result: Partial<Record<ReferenceParameter, PredictedValue>> = {};
  const wanted = new Set<ReferenceParameter>([...equations.parameters, ...(Object.keys(measured) as ReferenceParameter[])]);
  for (const parameter of wanted) {
    result[parameter] = equations.predict(demographics, parameter, measured[parameter]);
  }
  return result;
}

/**
 * Checks what every set needs: a finite positive height and a finite age. Returns the reason
 * when the demographics cannot be used, or null. Heights are not checked for plausibility:
 * the GLI calculator computes values for any positive height, and so does Tidemark.
 */
export function demographicsProblem(demographics: Demographics): string | null {
  if (!Number.isFinite(demographics.ageYears)) return 'Age is missing or not a number.';
  if (!Number.isFinite(demographics.heightCm) || demographics.heightCm <= 0) {
    return 'Height is missing, zero or negative.';
  }
  if (demographics.sex !== 'female' && demographics.sex !== 'male') return 'Sex is missing.';
  return null;
}

/** The reason given when age lies outside the range an equation was derived for. */
export function ageOutOfRange(label: string, parameter: ReferenceParameter, ageYears: number, fromYears: number, toYears: number): string {
  return `Age ${ageYears} y is outside the ${fromYears}-${toYears} y range of ${label} for ${PARAMETER_LABELS[parameter]}; no value is extrapolated.`;
}

/** The reason given for a parameter the set does not cover. */
export function parameterNotCovered(label: string, parameter: ReferenceParameter): string {
  return `${label} has no equation for ${PARAMETER_LABELS[parameter]}.`;
}

/**
 * z-score and percent predicted for a normally distributed parameter (NHANES III, ECSC 1993),
 * given its predicted value and residual standard deviation.
 */
export function linearPredictedValue(predicted: number, lln: number, sd: number, measured?: number): PredictedValue {
  const hasMeasured = measured !== undefined && Number.isFinite(measured);
  return {
    predicted,
    lln,
    uln: predicted + (predicted - lln),
    z: hasMeasured ? (measured - predicted) / sd : null,
    percentPredicted: hasMeasured ? (100 * measured) / predicted : null,
  };
}
