import type { Demographics, PredictedValue, ReferenceParameter } from '../model.js';
import { LLN_Z } from './lms.js';
import {
  type ReferenceEquations,
  ageOutOfRange,
  demographicsProblem,
  linearPredictedValue,
  parameterNotCovered,
  unavailable,
} from './reference-equations.js';

/** predicted = heightM x height (m) + ageYears x age (y) + intercept; LLN = predicted - 1.645 RSD. */
export interface Ecsc1993Equation {
  readonly perHeightM: number;
  readonly perAgeYears: number;
  readonly intercept: number;
  /** Residual standard deviation, in the parameter's unit. */
  readonly rsd: number;
}

/**
 * The ECSC/ERS 1993 adult equations, written from the publication (Quanjer PH, Tammeling GJ,
 * Cotes JE, et al. Lung volumes and forced ventilatory flows. Eur Respir J 1993;6 Suppl 16:5-40,
 * Table of spirometric prediction equations). These are the only built-in reference equations:
 * they are short, published as text, and need no imported tables. Coefficients are checked
 * against an independent transcription in the reference tests; the RSD values are from memory.
 * FEV1/FVC is in percent here, as published, and converted to a fraction when predicted.
 * FEF75 is the publication's MEF25 (flow when 75 % of FVC has been exhaled).
 */
export const ECSC_1993_EQUATIONS: Readonly<Record<'female' | 'male', Readonly<Partial<Record<ReferenceParameter, Ecsc1993Equation>>>>> = {
  male: {
    fvc: { perHeightM: 5.76, perAgeYears: -0.026, intercept: -4.34, rsd: 0.61 },
    fev1: { perHeightM: 4.3, perAgeYears: -0.029, intercept: -2.49, rsd: 0.51 },
    fev1Fvc: { perHeightM: 0, perAgeYears: -0.18, intercept: 87.21, rsd: 7.17 },
    pef: { perHeightM: 6.14, perAgeYears: -0.043, intercept: 0.15, rsd: 1.21 },
    fef2575: { perHeightM: 1.94, perAgeYears: -0.043, intercept: 2.7, rsd: 1.04 },
    fef75: { perHeightM: 2.61, perAgeYears: -0.026, intercept: -1.34, rsd: 0.78 },
  },
  female: {
    fvc: { perHeightM: 4.43, perAgeYears: -0.026, intercept: -2.89, rsd: 0.43 },
    fev1: { perHeightM: 3.95, perAgeYears: -0.025, intercept: -2.6, rsd: 0.38 },
    fev1Fvc: { perHeightM: 0, perAgeYears: -0.19, intercept: 89.1, rsd: 6.51 },
    pef: { perHeightM: 5.5, perAgeYears: -0.03, intercept: -1.11, rsd: 0.9 },
    fef2575: { perHeightM: 1.25, perAgeYears: -0.034, intercept: 2.92, rsd: 0.85 },
    fef75: { perHeightM: 1.05, perAgeYears: -0.025, intercept: 1.11, rsd: 0.51 },
  },
};

/** Adults 18-70 y (Quanjer 1993). */
export const ECSC_1993_AGE_RANGE_YEARS: readonly [number, number] = [18, 70];

/** Between 18 and 25 y the publication substitutes 25 y in the equations (from memory). */
export const ECSC_1993_MINIMUM_EQUATION_AGE_YEARS = 25;

const LABEL = 'ECSC/ERS 1993';
const PARAMETERS: readonly ReferenceParameter[] = ['fev1', 'fvc', 'fev1Fvc', 'fef2575', 'fef75', 'pef'];

/** Predicted value of one ECSC equation, with the 18-25 y age substitution. */
export function ecsc1993Predicted(equation: Ecsc1993Equation, ageYears: number, heightCm: number): number {
  const equationAgeYears = Math.max(ageYears, ECSC_1993_MINIMUM_EQUATION_AGE_YEARS);
  return equation.perHeightM * (heightCm / 100) + equation.perAgeYears * equationAgeYears + equation.intercept;
}

function predict(demographics: Demographics, parameter: ReferenceParameter, measured?: number): PredictedValue {
  if (!PARAMETERS.includes(parameter)) return unavailable(parameterNotCovered(LABEL, parameter));
  const problem = demographicsProblem(demographics);
  if (problem) return unavailable(problem);
  const { ageYears, heightCm, sex } = demographics;
  const [fromYears, toYears] = ECSC_1993_AGE_RANGE_YEARS;
  if (ageYears < fromYears || ageYears > toYears) {
    return unavailable(ageOutOfRange(LABEL, parameter, ageYears, fromYears, toYears));
  }
  const equation = ECSC_1993_EQUATIONS[sex][parameter];
  if (!equation) return unavailable(parameterNotCovered(LABEL, parameter));
  // Ratio equations are in percent; Tidemark carries FEV1/FVC as a fraction.
  const scale = parameter === 'fev1Fvc' ? 0.01 : 1;
  const predicted = ecsc1993Predicted(equation, ageYears, heightCm) * scale;
  if (!(predicted > 0)) {
    return unavailable(`${LABEL} gives no positive ${parameter} value at height ${heightCm} cm.`);
  }
  const sd = equation.rsd * scale;
  return linearPredictedValue(predicted, predicted + LLN_Z * sd, sd, measured);
}

/** The built-in ECSC/ERS 1993 equations (European adults; no ethnic terms). */
export const ecsc1993Equations: ReferenceEquations = {
  id: 'ecsc-1993',
  label: LABEL,
  source:
    'Quanjer PH, Tammeling GJ, Cotes JE, et al. Lung volumes and forced ventilatory flows. ' +
    'Eur Respir J 1993;6 Suppl 16:5-40',
  parameters: PARAMETERS,
  ethnicities: null,
  predict,
};
