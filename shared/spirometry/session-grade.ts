/**
 * Repeatability and session grade for FEV1 or FVC (ATS/ERS 2019 Table 10).
 * Values are compared in whole millilitres, as readers and the standard's
 * worked examples do, so that 3.20 - 3.05 L is "within 0.150 L" despite
 * binary floating point.
 */
import type { Grade } from './model.js';
import type { GradeTolerances, ResolvedProtocol } from './protocol.js';
import { isChildAge } from './protocol.js';

/** One effort's value for the graded parameter and how the engine or reader judged it. */
export interface GradedValue {
  readonly effortIndex: number;
  readonly valueL: number | null;
  readonly acceptable: boolean;
  readonly usable: boolean;
}

/** The grade of one parameter with the numbers that decided it. */
export interface Repeatability {
  readonly grade: Grade;
  readonly acceptableCount: number;
  /** Usable but not acceptable values. */
  readonly usableCount: number;
  /** Largest and second-largest acceptable values (L), when there are any. */
  readonly largestL: number | null;
  readonly secondLargestL: number | null;
  /** Their difference in whole millilitres; null with fewer than two acceptable values. */
  readonly differenceMl: number | null;
  /** Tolerances applied for A/B, C and D (mL), after the proportional rule. */
  readonly tolerancesMl: { readonly ab: number; readonly c: number; readonly d: number };
  /** Whether the child (age 6 or under) tolerances were applied. */
  readonly childTolerances: boolean;
}

/** Rounds litres to whole millilitres. */
export function toWholeMl(valueL: number): number {
  return Math.round(valueL * 1000);
}

/**
 * A tolerance in millilitres: the fixed limit, or the proportional one of the
 * highest value when the band has one ("whichever is greater").
 */
function toleranceMl(limitL: number, fractionOfHighest: number, highestMl: number): number {
  return Math.max(toWholeMl(limitL), fractionOfHighest * highestMl);
}

/** Grades one parameter from its acceptable values with explicit tolerances. */
export function gradeWithTolerances(
  values: readonly GradedValue[],
  tolerances: GradeTolerances,
  minAcceptableForA: number,
  childTolerances = false,
): Repeatability {
  // One pass, no intermediate arrays: this runs for every parameter of every analysed session.
  const acceptableMl: number[] = [];
  let usableCount = 0;
  for (const value of values) {
    if (value.valueL === null || !Number.isFinite(value.valueL)) continue;
    if (value.acceptable) acceptableMl.push(toWholeMl(value.valueL));
    else if (value.usable) usableCount++;
  }
  if (acceptableMl.length > 1) acceptableMl.sort((a, b) => b - a);
  const highestMl = acceptableMl.length > 0 ? acceptableMl[0] : 0;
  const tolerancesMl = {
    ab: toleranceMl(tolerances.abToleranceL, tolerances.fractionOfHighest, highestMl),
    c: toleranceMl(tolerances.cToleranceL, tolerances.fractionOfHighest, highestMl),
    d: toleranceMl(tolerances.dToleranceL, tolerances.fractionOfHighest, highestMl),
  };
  const result = (grade: Grade, differenceMl: number | null): Repeatability => ({
    grade,
    acceptableCount: acceptableMl.length,
    usableCount,
    largestL: acceptableMl.length > 0 ? acceptableMl[0] / 1000 : null,
    secondLargestL: acceptableMl.length > 1 ? acceptableMl[1] / 1000 : null,
    differenceMl,
    tolerancesMl,
    childTolerances,
  });
  if (acceptableMl.length === 0) return result(usableCount > 0 ? 'U' : 'F', null);
  if (acceptableMl.length === 1) return result('E', null);
  const differenceMl = acceptableMl[0] - acceptableMl[1];
  let grade: Grade;
  if (differenceMl <= tolerancesMl.ab) grade = acceptableMl.length >= minAcceptableForA ? 'A' : 'B';
  else if (differenceMl <= tolerancesMl.c) grade = 'C';
  else if (differenceMl <= tolerancesMl.d) grade = 'D';
  else grade = 'E';
  return result(grade, differenceMl);
}

/**
 * Grades one parameter (FEV1 or FVC) of one pre- or post-bronchodilator set with
 * the protocol's tolerances for the subject's age (adult tolerances when the age
 * is unknown).
 */
export function gradeSession(
  values: readonly GradedValue[],
  protocol: ResolvedProtocol,
  ageYears?: number,
): Repeatability {
  const child = isChildAge(protocol, ageYears);
  const tolerances = child ? protocol.grading.childAge : protocol.grading.overChildAge;
  return gradeWithTolerances(values, tolerances, protocol.grading.minAcceptableForA, child);
}

/** Grades from best to worst, for "at least grade X" comparisons. */
const GRADE_ORDER: readonly Grade[] = ['A', 'B', 'C', 'D', 'E', 'U', 'F'];

/** Whether `grade` is as good as `minimum` or better. */
export function gradeAtLeast(grade: Grade, minimum: Grade): boolean {
  return GRADE_ORDER.indexOf(grade) <= GRADE_ORDER.indexOf(minimum);
}

/**
 * The repeatability tolerance (mL) used by EOFE criterion 3: the grade A/B
 * tolerance of the age band, with the proportional rule applied to `highestL`.
 */
export function repeatabilityToleranceMl(protocol: ResolvedProtocol, highestL: number, ageYears?: number): number {
  const band = isChildAge(protocol, ageYears) ? protocol.grading.childAge : protocol.grading.overChildAge;
  return toleranceMl(band.abToleranceL, band.fractionOfHighest, toWholeMl(highestL));
}
