/**
 * The session result that follows from a reader's verdicts: repeatability and grades, reported
 * values and endpoint eligibility, computed by the same rules as the engine's first pass. The
 * reading room runs it in the browser as verdicts change and the server runs it again at signing.
 */
import type { EffortMetrics, Verdict } from './model.js';
import type { ResolvedProtocol } from './protocol.js';
import { selectReportedValues, type ReportedValues } from './reported-values.js';
import { endpointEligibility, type EndpointEligibility } from './session-analysis.js';
import { gradeSession, type Repeatability } from './session-grade.js';

/** One effort as the reader judged it. */
export interface JudgedEffort {
  readonly index: number;
  readonly metrics: EffortMetrics;
  readonly fev1Verdict: Verdict;
  readonly fvcVerdict: Verdict;
}

/** The session result of one read. */
export interface ReadSummary {
  readonly fev1: Repeatability;
  readonly fvc: Repeatability;
  readonly reported: ReportedValues;
  readonly endpoint: EndpointEligibility;
}

/** Grades and reported values from the reader's verdicts (ATS/ERS 2019 rules held in the protocol). */
export function summarizeRead(efforts: readonly JudgedEffort[], protocol: ResolvedProtocol, ageYears?: number): ReadSummary {
  const graded = (pick: (effort: JudgedEffort) => { valueL: number | null; verdict: Verdict }) =>
    efforts.map((effort) => {
      const { valueL, verdict } = pick(effort);
      return { effortIndex: effort.index, valueL, acceptable: verdict === 'acceptable', usable: verdict === 'usable' };
    });
  const fev1 = gradeSession(
    graded((effort) => ({ valueL: effort.metrics.fev1L, verdict: effort.fev1Verdict })),
    protocol,
    ageYears,
  );
  const fvc = gradeSession(
    graded((effort) => ({ valueL: effort.metrics.fvcL, verdict: effort.fvcVerdict })),
    protocol,
    ageYears,
  );
  // Selection works on positions in the list; map back to effort indices.
  const selected = selectReportedValues(efforts.map((effort) => ({ metrics: effort.metrics, fev1Verdict: effort.fev1Verdict, fvcVerdict: effort.fvcVerdict })));
  const toIndex = (position: number) => efforts[position].index;
  const reported: ReportedValues = {
    ...selected,
    fev1: selected.fev1 ? { ...selected.fev1, effortIndex: toIndex(selected.fev1.effortIndex) } : null,
    fvc: selected.fvc ? { ...selected.fvc, effortIndex: toIndex(selected.fvc.effortIndex) } : null,
    bestEffortIndex: selected.bestEffortIndex === null ? null : toIndex(selected.bestEffortIndex),
  };
  return { fev1, fvc, reported, endpoint: endpointEligibility(fev1, fvc, protocol) };
}
