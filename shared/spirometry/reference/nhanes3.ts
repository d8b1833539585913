import type { Demographics, Ethnicity, PredictedValue, ReferenceParameter } from '../model.js';
import { LLN_Z } from './lms.js';
import {
  type ReferenceEquations,
  ageOutOfRange,
  demographicsProblem,
  linearPredictedValue,
  parameterNotCovered,
  unavailable,
} from './reference-equations.js';

/** The three NHANES III groups (Hankinson 1999). */
export const NHANES3_ETHNICITIES: readonly Ethnicity[] = ['caucasian', 'african-american', 'mexican-american'];

/** NHANES III sampled ages 8-80 y (Hankinson 1999). */
export const NHANES3_AGE_RANGE_YEARS: readonly [number, number] = [8, 80];

/** Parameters with quadratic age/height equations (Hankinson 1999 Tables 4 and 5). */
export type Nhanes3QuadraticParameter = 'fev1' | 'fvc' | 'fev6' | 'pef' | 'fef2575';

/**
 * One row of Hankinson 1999 Tables 4-5: predicted = b0 + b1 age + b2 age^2 + b3 height(cm)^2;
 * the LLN uses the same b0-b2 with its own height coefficient.
 */
export interface Nhanes3QuadraticRow {
  readonly parameter: Nhanes3QuadraticParameter;
  readonly sex: 'female' | 'male';
  readonly ethnicity: Ethnicity;
  readonly ageGroup: 'child' | 'adult';
  readonly b0: number;
  readonly b1Age: number;
  readonly b2AgeSquared: number;
  readonly b3HeightCmSquaredPredicted: number;
  readonly b3HeightCmSquaredLln: number;
}

/** One row of Hankinson 1999 Table 6 (FEV1/FVC in percent): value = intercept + slope age. */
export interface Nhanes3RatioRow {
  readonly parameter: 'fev1Fvc';
  readonly sex: 'female' | 'male';
  readonly ethnicity: Ethnicity;
  readonly interceptPredictedPercent: number;
  readonly interceptLlnPercent: number;
  readonly agePercentPerYear: number;
}

/** NHANES III coefficients as imported from the operator's tables. */
export interface Nhanes3Coefficients {
  readonly quadratic: readonly Nhanes3QuadraticRow[];
  readonly ratio: readonly Nhanes3RatioRow[];
}

const CANONICAL_ORDER: readonly ReferenceParameter[] = ['fev1', 'fvc', 'fev1Fvc', 'fef2575', 'fef75', 'pef', 'fev6'];

const LABEL = 'NHANES III';

/**
 * Which of Hankinson's equation groups applies: the child equations below 20 y for males and
 * below 18 y for females, where the child and adult curves meet (Hankinson 1999). Using 20 y for
 * both sexes is a known error for females aged 18-19.
 */
export function nhanes3AgeGroup(sex: 'female' | 'male', ageYears: number): 'child' | 'adult' {
  return ageYears < (sex === 'male' ? 20 : 18) ? 'child' : 'adult';
}

/**
 * NHANES III equations over imported coefficients. Hankinson publishes predicted and LLN only;
 * Tidemark derives the rest (common practice, from memory): SD = (predicted - LLN)/1.645,
 * z = (measured - predicted)/SD and ULN = predicted + (predicted - LLN).
 */
export function createNhanes3Equations(coefficients: Nhanes3Coefficients): ReferenceEquations {
  const present = new Set<ReferenceParameter>([
    ...coefficients.quadratic.map((row) => row.parameter),
    ...coefficients.ratio.map((row) => row.parameter),
  ]);
  const parameters = CANONICAL_ORDER.filter((parameter) => present.has(parameter));

  function predict(demographics: Demographics, parameter: ReferenceParameter, measured?: number): PredictedValue {
    if (!present.has(parameter)) return unavailable(parameterNotCovered(LABEL, parameter));
    const problem = demographicsProblem(demographics);
    if (problem) return unavailable(problem);
    const { ageYears, heightCm, sex, ethnicity } = demographics;
    const [fromYears, toYears] = NHANES3_AGE_RANGE_YEARS;
    if (ageYears < fromYears || ageYears > toYears) {
      return unavailable(ageOutOfRange(LABEL, parameter, ageYears, fromYears, toYears));
    }
    if (!ethnicity) return unavailable(`${LABEL} needs the ethnic group; none was given.`);
    if (!NHANES3_ETHNICITIES.includes(ethnicity)) {
      return unavailable(`${LABEL} has no equations for the ethnic group "${ethnicity}".`);
    }
    if (parameter === 'fev1Fvc') {
      const row = coefficients.ratio.find((r) => r.sex === sex && r.ethnicity === ethnicity);
      if (!row) return unavailable(`The imported ${LABEL} tables have no FEV1/FVC row for ${ethnicity} ${sex}s.`);
      const predicted = (row.interceptPredictedPercent + row.agePercentPerYear * ageYears) / 100;
      const lln = (row.interceptLlnPercent + row.agePercentPerYear * ageYears) / 100;
      return linearPredictedValue(predicted, lln, (predicted - lln) / -LLN_Z, measured);
    }
    const ageGroup = nhanes3AgeGroup(sex, ageYears);
    const row = coefficients.quadratic.find(
      (r) => r.parameter === parameter && r.sex === sex && r.ethnicity === ethnicity && r.ageGroup === ageGroup,
    );
    if (!row) {
      return unavailable(`The imported ${LABEL} tables have no ${parameter} ${ageGroup} row for ${ethnicity} ${sex}s.`);
    }
    const ageTerms = row.b0 + row.b1Age * ageYears + row.b2AgeSquared * ageYears * ageYears;
    const heightSquared = heightCm * heightCm;
    const predicted = ageTerms + row.b3HeightCmSquaredPredicted * heightSquared;
    const lln = ageTerms + row.b3HeightCmSquaredLln * heightSquared;
    if (!(predicted > 0)) {
      return unavailable(`${LABEL} gives no positive ${parameter} value at height ${heightCm} cm and age ${ageYears} y.`);
    }
    return linearPredictedValue(predicted, lln, (predicted - lln) / -LLN_Z, measured);
  }

  return {
    id: 'nhanes3',
    label: LABEL,
    source:
      'Hankinson JL, Odencrantz JR, Fedan KB. Spirometric reference values from a sample of the general U.S. ' +
      'population. Am J Respir Crit Care Med 1999;159:179-187',
    parameters,
    ethnicities: NHANES3_ETHNICITIES,
    predict,
  };
}
