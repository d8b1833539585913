import type { Demographics, EquationsId, Ethnicity, PredictedValue, ReferenceParameter } from '../model.js';
import { type Lms, lmsLowerLimit, lmsUpperLimit, lmsZScore, percentPredicted } from './lms.js';
import {
  type ReferenceEquations,
  PARAMETER_LABELS,
  ageOutOfRange,
  demographicsProblem,
  parameterNotCovered,
  unavailable,
} from './reference-equations.js';

/**
 * Coefficients of one GLI parameter for one sex (Quanjer 2012; Bowerman 2023):
 * M = exp(mIntercept + mLnHeight ln(height cm) + mLnAge ln(age) + ethnic term + Mspline),
 * S = exp(sIntercept + sLnAge ln(age) + ethnic term + Sspline),
 * L = lIntercept + lLnAge ln(age) + Lspline.
 */
export interface GliCoefficients {
  readonly mIntercept: number;
  readonly mLnHeight: number;
  readonly mLnAge: number;
  /** Added to ln M for the group; groups absent here (the reference group) add 0. */
  readonly mEthnic: Partial<Record<Ethnicity, number>>;
  readonly sIntercept: number;
  readonly sLnAge: number;
  readonly sEthnic: Partial<Record<Ethnicity, number>>;
  readonly lIntercept: number;
  readonly lLnAge: number;
}

/** One row of a GLI lookup table: spline values at one age (published in quarter-year steps). */
export interface GliSplineRow {
  readonly ageYears: number;
  readonly mSpline: number;
  readonly sSpline: number;
  readonly lSpline: number;
}

/** Coefficients and spline rows (ascending age) of one parameter for one sex. */
export interface GliParameterTable {
  readonly coefficients: GliCoefficients;
  readonly splines: readonly GliSplineRow[];
}

/** A whole GLI lookup set, as imported from the publisher's tables. */
export interface GliLookupSet {
  readonly female: Partial<Record<ReferenceParameter, GliParameterTable>>;
  readonly male: Partial<Record<ReferenceParameter, GliParameterTable>>;
}

/**
 * Spline values at any age inside the table, linearly interpolated between the two
 * neighbouring rows. Rounding the age to the nearest row misses the GLI calculator's output
 * by up to 0.044 L (see the reference data notes), so interpolation is required.
 */
export function interpolateSplines(splines: readonly GliSplineRow[], ageYears: number): GliSplineRow | null {
  const count = splines.length;
  if (count === 0 || ageYears < splines[0].ageYears || ageYears > splines[count - 1].ageYears) return null;
  let low = 0;
  let high = count - 1;
  while (high - low > 1) {
    const middle = (low + high) >> 1;
    if (splines[middle].ageYears <= ageYears) low = middle;
    else high = middle;
  }
  const lower = splines[low];
  const upper = splines[high];
  const span = upper.ageYears - lower.ageYears;
  const fraction = span > 0 ? (ageYears - lower.ageYears) / span : 0;
  const between = (a: number, b: number) => a + (b - a) * fraction;
  return {
    ageYears,
    mSpline: between(lower.mSpline, upper.mSpline),
    sSpline: between(lower.sSpline, upper.sSpline),
    lSpline: between(lower.lSpline, upper.lSpline),
  };
}

/** L, M and S of one parameter at an age and height; null when the age is outside the table. */
export function gliLms(table: GliParameterTable, ageYears: number, heightCm: number, ethnicity?: Ethnicity): Lms | null {
  const spline = interpolateSplines(table.splines, ageYears);
  if (!spline) return null;
  const c = table.coefficients;
  const lnAge = Math.log(ageYears);
  const mEthnic = ethnicity ? (c.mEthnic[ethnicity] ?? 0) : 0;
  const sEthnic = ethnicity ? (c.sEthnic[ethnicity] ?? 0) : 0;
  return {
    m: Math.exp(c.mIntercept + c.mLnHeight * Math.log(heightCm) + c.mLnAge * lnAge + mEthnic + spline.mSpline),
    s: Math.exp(c.sIntercept + c.sLnAge * lnAge + sEthnic + spline.sSpline),
    l: c.lIntercept + c.lLnAge * lnAge + spline.lSpline,
  };
}

/** What distinguishes one GLI publication from another. */
export interface GliDefinition {
  readonly id: EquationsId;
  readonly label: string;
  readonly source: string;
  readonly parameters: readonly ReferenceParameter[];
  /** Published age range (years, inclusive) per parameter. */
  readonly ageRangeYears: Readonly<Partial<Record<ReferenceParameter, readonly [number, number]>>>;
  /** Groups with their own terms; null when the equations have none (then ethnicity is ignored). */
  readonly ethnicities: readonly Ethnicity[] | null;
}

/** Reference equations computed from a GLI definition and an imported lookup set. */
export function createGliEquations(definition: GliDefinition, lookup: GliLookupSet): ReferenceEquations {
  const { label } = definition;
  function predict(demographics: Demographics, parameter: ReferenceParameter, measured?: number): PredictedValue {
    const range = definition.ageRangeYears[parameter];
    if (!definition.parameters.includes(parameter) || !range) return unavailable(parameterNotCovered(label, parameter));
    const problem = demographicsProblem(demographics);
    if (problem) return unavailable(problem);
    const { ageYears, heightCm, sex, ethnicity } = demographics;
    if (ageYears < range[0] || ageYears > range[1]) {
      return unavailable(ageOutOfRange(label, parameter, ageYears, range[0], range[1]));
    }
    let ethnicTerms: Ethnicity | undefined;
    if (definition.ethnicities) {
      if (!ethnicity) return unavailable(`${label} needs the ethnic group; none was given.`);
      if (!definition.ethnicities.includes(ethnicity)) {
        return unavailable(`${label} has no equations for the ethnic group "${ethnicity}".`);
      }
      ethnicTerms = ethnicity;
    }
    const table = lookup[sex][parameter];
    if (!table) {
      return unavailable(`The imported ${label} tables have no ${PARAMETER_LABELS[parameter]} table for ${sex}s.`);
    }
    const lms = gliLms(table, ageYears, heightCm, ethnicTerms);
    if (!lms) {
      return unavailable(`The imported ${label} ${PARAMETER_LABELS[parameter]} table for ${sex}s does not cover age ${ageYears} y.`);
    }
    const hasMeasured = measured !== undefined && Number.isFinite(measured);
    return {
      predicted: lms.m,
      lln: lmsLowerLimit(lms),
      uln: lmsUpperLimit(lms),
      z: hasMeasured ? lmsZScore(lms, measured) : null,
      percentPredicted: hasMeasured ? percentPredicted(lms.m, measured) : null,
    };
  }
  return {
    id: definition.id,
    label,
    source: definition.source,
    parameters: definition.parameters,
    ethnicities: definition.ethnicities,
    predict,
  };
}
