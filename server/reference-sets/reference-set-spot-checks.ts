import type { ImportableEquationsId, ReferenceSpotCheck } from '../../shared/contracts/reference-sets.js';
import type { Demographics, ReferenceParameter } from '../../shared/spirometry/model.js';
import { PARAMETER_LABELS, type ReferenceEquations } from '../../shared/spirometry/reference/reference-equations.js';

/** One known value: who, which parameter, predicted or LLN, and what the right tables give. */
interface SpotCase {
  readonly demographics: Demographics;
  readonly parameter: ReferenceParameter;
  readonly quantity: 'predicted' | 'lln';
  readonly expected: number;
}

/** Known values of one set, with their source and the accepted difference. */
interface SpotCheckSet {
  readonly source: string;
  readonly tolerance: number;
  readonly cases: readonly SpotCase[];
}

const male = (ageYears: number, heightCm: number, ethnicity?: Demographics['ethnicity']): Demographics => ({ sex: 'male', ageYears, heightCm, ethnicity });
const female = (ageYears: number, heightCm: number, ethnicity?: Demographics['ethnicity']): Demographics => ({
  sex: 'female',
  ageYears,
  heightCm,
  ethnicity,
});

/**
 * A few values per set, spread over both sexes, children and adults, and every table kind, so
 * that a file with the right layout but the wrong numbers (another edition, a shifted column,
 * a rounded copy) is caught. A spot check, not a proof: the layout checks cover every row.
 */
const SPOT_CHECKS: Readonly<Record<ImportableEquationsId, SpotCheckSet>> = {
  'gli-global-2022': {
    source:
      'Bowerman 2023 equations computed by an independent open-source implementation (cross-check values; it agrees with Tidemark to 1e-10)',
    tolerance: 1e-6,
    cases: [
      { demographics: male(25, 155), parameter: 'fev1', quantity: 'predicted', expected: 3.10099174918164 },
      { demographics: male(25, 155), parameter: 'fev1', quantity: 'lln', expected: 2.42608536843794 },
      { demographics: female(10, 170), parameter: 'fvc', quantity: 'predicted', expected: 3.58635154423409 },
      { demographics: female(10, 170), parameter: 'fvc', quantity: 'lln', expected: 2.81497248167503 },
      { demographics: male(65, 185), parameter: 'fev1Fvc', quantity: 'predicted', expected: 0.766119811110932 },
      { demographics: male(65, 185), parameter: 'fev1Fvc', quantity: 'lln', expected: 0.641130731587598 },
      { demographics: female(85, 155), parameter: 'fev1', quantity: 'predicted', expected: 1.65838836237263 },
      { demographics: female(85, 155), parameter: 'fev1', quantity: 'lln', expected: 1.10866661100169 },
    ],
  },
  'gli-2012': {
    source: 'GLI-2012 web calculator output (Global Lung Function Initiative), rounded to 3 decimals',
    // Half a unit of the calculator's last decimal.
    tolerance: 0.0005,
    cases: [
      { demographics: male(10.2, 170, 'caucasian'), parameter: 'fev1', quantity: 'predicted', expected: 3.123 },
      { demographics: male(10.2, 170, 'caucasian'), parameter: 'fvc', quantity: 'lln', expected: 3.059 },
      { demographics: female(57, 170, 'south-east-asian'), parameter: 'fev1', quantity: 'lln', expected: 1.875 },
      { demographics: female(57, 170, 'south-east-asian'), parameter: 'fef2575', quantity: 'predicted', expected: 2.462 },
      { demographics: male(15.4, 170, 'african-american'), parameter: 'fev1Fvc', quantity: 'predicted', expected: 0.873 },
      { demographics: male(15.4, 170, 'african-american'), parameter: 'fef75', quantity: 'lln', expected: 0.823 },
      { demographics: female(72.6, 150, 'south-east-asian'), parameter: 'fvc', quantity: 'predicted', expected: 1.982 },
    ],
  },
  nhanes3: {
    source: 'Hankinson 1999, Tables 4-6: b0 + b1·age + b2·age² + b3·height² worked by hand from the published coefficients',
    tolerance: 1e-6,
    cases: [
      // Table 4: 0.5536 - 0.01303·40 - 0.000172·40² + 0.00014098·175² (LLN 0.00011607).
      { demographics: male(40, 175, 'caucasian'), parameter: 'fev1', quantity: 'predicted', expected: 4.0747125 },
      { demographics: male(40, 175, 'caucasian'), parameter: 'fev1', quantity: 'lln', expected: 3.31184375 },
      // Table 5: -0.3039 + 0.00536·30 - 0.000265·30² + 0.00013606·165² (LLN 0.00010916).
      { demographics: female(30, 165, 'african-american'), parameter: 'fvc', quantity: 'predicted', expected: 3.3226335 },
      { demographics: female(30, 165, 'african-american'), parameter: 'fvc', quantity: 'lln', expected: 2.590281 },
      // Table 5, child: -0.871 + 0.06537·12 + 0.00011496·150².
      { demographics: female(12, 150, 'caucasian'), parameter: 'fev1', quantity: 'predicted', expected: 2.50004 },
      // Table 6: (92.36 - 0.2248·50) % and (83.044 - 0.2248·50) %.
      { demographics: female(50, 160, 'mexican-american'), parameter: 'fev1Fvc', quantity: 'predicted', expected: 0.8112 },
      { demographics: female(50, 160, 'mexican-american'), parameter: 'fev1Fvc', quantity: 'lln', expected: 0.71804 },
    ],
  },
};

const ETHNICITY_NAMES: Readonly<Record<NonNullable<Demographics['ethnicity']>, string>> = {
  caucasian: 'Caucasian',
  'african-american': 'African American',
  'north-east-asian': 'North-East Asian',
  'south-east-asian': 'South-East Asian',
  'mexican-american': 'Mexican American',
  other: 'other/mixed',
};

function describeCase({ demographics, parameter, quantity }: SpotCase): string {
  const who = [
    demographics.sex === 'male' ? 'Male' : 'Female',
    ...(demographics.ethnicity ? [ETHNICITY_NAMES[demographics.ethnicity]] : []),
    `${demographics.ageYears} y`,
    `${demographics.heightCm} cm`,
  ].join(', ');
  return `${who}: ${PARAMETER_LABELS[parameter]} ${quantity === 'lln' ? 'LLN' : 'predicted'}`;
}

/** Computes the known values with the imported tables and compares them with the expected ones. */
export function runSpotChecks(equationsId: ImportableEquationsId, equations: ReferenceEquations): ReferenceSpotCheck[] {
  const { source, tolerance, cases } = SPOT_CHECKS[equationsId];
  return cases.map((spot) => {
    const value = equations.predict(spot.demographics, spot.parameter);
    const found = spot.quantity === 'lln' ? value.lln : value.predicted;
    return {
      description: describeCase(spot),
      source,
      expected: spot.expected,
      found,
      tolerance,
      // The relative slack keeps a difference of exactly the tolerance from failing on rounding.
      passed: found !== null && Math.abs(found - spot.expected) <= tolerance * (1 + 1e-9),
    };
  });
}

/** The problem to list for a spot check that did not agree. */
export function spotCheckProblem(check: ReferenceSpotCheck): string {
  const found = check.found === null ? 'no value' : String(check.found);
  return `Spot check failed: ${check.description} should be ${check.expected} (within ${check.tolerance}), the file gives ${found}. Source of the expected value: ${check.source}.`;
}
