/**
 * Reported values of a pre- or post-bronchodilator set (ATS/ERS 2019): the
 * largest acceptable FEV1 and the largest acceptable FVC, possibly from different
 * efforts; usable values only when no value is acceptable (grade U).
 */
import type { EffortMetrics, Verdict } from './model.js';

/** What the selection needs to know about each effort. */
export interface ReportableEffort {
  readonly metrics: EffortMetrics;
  readonly fev1Verdict: Verdict;
  readonly fvcVerdict: Verdict;
}

/** One selected value and the effort it came from. */
export interface SelectedValue {
  readonly valueL: number;
  readonly effortIndex: number;
  /** Whether it comes from a usable (not acceptable) effort, grade U. */
  readonly fromUsable: boolean;
}

/** The set's reported values, with the efforts selected. */
export interface ReportedValues {
  readonly fev1: SelectedValue | null;
  readonly fvc: SelectedValue | null;
  /** FEV1 / FVC of the two reported values (a ratio, not percent). */
  readonly fev1FvcRatio: number | null;
  /**
   * The "best test": the effort with the largest FEV1 + FVC among efforts whose
   * FEV1 and FVC are both acceptable (else either acceptable, else usable). PEF,
   * FEF25-75 and the displayed curves come from it.
   */
  readonly bestEffortIndex: number | null;
  readonly pefLPerS: number | null;
  readonly fef2575LPerS: number | null;
  readonly fev6L: number | null;
}

function largest(
  efforts: readonly ReportableEffort[],
  pick: (metrics: EffortMetrics) => number | null,
  verdictOf: (effort: ReportableEffort) => Verdict,
): SelectedValue | null {
  for (const wanted of ['acceptable', 'usable'] as const) {
    let best: SelectedValue | null = null;
    efforts.forEach((effort, effortIndex) => {
      const valueL = pick(effort.metrics);
      if (verdictOf(effort) !== wanted || valueL === null || !Number.isFinite(valueL)) return;
      if (best === null || valueL > best.valueL) best = { valueL, effortIndex, fromUsable: wanted === 'usable' };
    });
    if (best !== null) return best;
  }
  return null;
}

/** Index of the best test, or null when no effort has an acceptable or usable value. */
export function selectBestEffort(efforts: readonly ReportableEffort[]): number | null {
  const tiers: ((effort: ReportableEffort) => boolean)[] = [
    (effort) => effort.fev1Verdict === 'acceptable' && effort.fvcVerdict === 'acceptable',
    (effort) => effort.fev1Verdict === 'acceptable' || effort.fvcVerdict === 'acceptable',
    (effort) => effort.fev1Verdict !== 'not_acceptable' || effort.fvcVerdict !== 'not_acceptable',
  ];
  for (const inTier of tiers) {
    let bestIndex: number | null = null;
    let bestSumL = -Infinity;
    efforts.forEach((effort, index) => {
      if (!inTier(effort)) return;
      const sumL = (effort.metrics.fev1L ?? 0) + effort.metrics.fvcL;
      if (sumL > bestSumL) {
        bestSumL = sumL;
        bestIndex = index;
      }
    });
    if (bestIndex !== null) return bestIndex;
  }
  return null;
}

/** Selects the reported values of one set from its efforts and their verdicts. */
export function selectReportedValues(efforts: readonly ReportableEffort[]): ReportedValues {
  const fev1 = largest(efforts, (metrics) => metrics.fev1L, (effort) => effort.fev1Verdict);
  const fvc = largest(efforts, (metrics) => metrics.fvcL, (effort) => effort.fvcVerdict);
  const bestEffortIndex = selectBestEffort(efforts);
  const best = bestEffortIndex === null ? null : efforts[bestEffortIndex].metrics;
  return {
    fev1,
    fvc,
    fev1FvcRatio: fev1 !== null && fvc !== null && fvc.valueL > 0 ? fev1.valueL / fvc.valueL : null,
    bestEffortIndex,
    pefLPerS: best?.pefLPerS ?? null,
    fef2575LPerS: best?.fef2575LPerS ?? null,
    fev6L: best?.fev6L ?? null,
  };
}
