import type { Ethnicity, ReferenceParameter } from '../model.js';
import { type GliCoefficients, type GliDefinition, type GliLookupSet, createGliEquations } from './gli-tables.js';
import type { ReferenceEquations } from './reference-equations.js';

/** The five GLI-2012 groups; Caucasian is the reference group (no ethnic terms). */
export const GLI_2012_ETHNICITIES: readonly Ethnicity[] = [
  'caucasian',
  'african-american',
  'north-east-asian',
  'south-east-asian',
  'other',
];

/** Spirometric parameters of GLI-2012 that Tidemark uses. */
export const GLI_2012_PARAMETERS: readonly ReferenceParameter[] = ['fev1', 'fvc', 'fev1Fvc', 'fef2575', 'fef75'];

/** GLI-2012 published 3-95 y, the mid-expiratory flows only to 90 y (Quanjer 2012). */
export const GLI_2012_DEFINITION: GliDefinition = {
  id: 'gli-2012',
  label: 'GLI-2012',
  source:
    'Quanjer PH, Stanojevic S, Cole TJ, et al. Multi-ethnic reference values for spirometry for the 3-95-yr age range: ' +
    'the global lung function 2012 equations. Eur Respir J 2012;40:1324-43',
  parameters: GLI_2012_PARAMETERS,
  ageRangeYears: { fev1: [3, 95], fvc: [3, 95], fev1Fvc: [3, 95], fef2575: [3, 90], fef75: [3, 90] },
  ethnicities: GLI_2012_ETHNICITIES,
};

/**
 * Coefficients as the GLI-2012 lookup tables name them: M uses a0 + a1 ln(height) + a2 ln(age)
 * + a3 African American + a4 North-East Asian + a5 South-East Asian + a6 Other/mixed; S uses
 * p0 + p1 ln(age) + p2..p5 for the same groups; L uses q0 + q1 ln(age). Absent terms are 0.
 */
export interface Gli2012PublishedCoefficients {
  readonly a0: number;
  readonly a1: number;
  readonly a2: number;
  readonly a3?: number;
  readonly a4?: number;
  readonly a5?: number;
  readonly a6?: number;
  readonly p0: number;
  readonly p1: number;
  readonly p2?: number;
  readonly p3?: number;
  readonly p4?: number;
  readonly p5?: number;
  readonly q0: number;
  readonly q1?: number;
}

/** Maps the published coefficient names onto Tidemark's GLI model. */
export function gli2012Coefficients(published: Gli2012PublishedCoefficients): GliCoefficients {
  const p = published;
  return {
    mIntercept: p.a0,
    mLnHeight: p.a1,
    mLnAge: p.a2,
    mEthnic: {
      'african-american': p.a3 ?? 0,
      'north-east-asian': p.a4 ?? 0,
      'south-east-asian': p.a5 ?? 0,
      other: p.a6 ?? 0,
    },
    sIntercept: p.p0,
    sLnAge: p.p1,
    sEthnic: {
      'african-american': p.p2 ?? 0,
      'north-east-asian': p.p3 ?? 0,
      'south-east-asian': p.p4 ?? 0,
      other: p.p5 ?? 0,
    },
    lIntercept: p.q0,
    lLnAge: p.q1 ?? 0,
  };
}

/** GLI-2012 equations over an imported lookup set. */
export function createGli2012Equations(lookup: GliLookupSet): ReferenceEquations {
  return createGliEquations(GLI_2012_DEFINITION, lookup);
}
