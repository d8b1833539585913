/**
 * The engine's first pass over one pre- or post-bronchodilator set: each effort
 * analysed alone, then the session-level findings, verdicts, grades, reported
 * values and, with demographics and equations, predicted values. Pure.
 */
import { judgeEffort, type EffortVerdicts } from './acceptability.js';
import { analyzeRecording } from './effort-analysis.js';
import type { Demographics, EffortMetrics, Finding, PlotSeries, PredictedValue, Recording, ReferenceParameter } from './model.js';
import type { ResolvedProtocol } from './protocol.js';
import { isChildAge } from './protocol.js';
import { predictAll, type ReferenceEquations } from './reference/reference-equations.js';
import { selectReportedValues, type ReportedValues } from './reported-values.js';
import { applySessionFindings } from './session-findings.js';
import { gradeAtLeast, gradeSession, type GradedValue, type Repeatability } from './session-grade.js';

/** One effort of the session after every pass. */
export interface EffortAnalysis {
  readonly index: number;
  readonly label: string;
  readonly metrics: EffortMetrics;
  readonly findings: readonly Finding[];
  readonly verdicts: EffortVerdicts;
  /** Null unless {@link SessionAnalysisOptions.plots} asked for them. */
  readonly plot: PlotSeries | null;
}

/** Predicted values of the reported results; each entry may be unavailable with a reason. */
export type SessionPredicted = Partial<Record<ReferenceParameter, PredictedValue>> & {
  readonly equationsId: string;
  readonly equationsLabel: string;
};

/** Whether a reported value may serve as a study endpoint under the protocol's tightening. */
export interface EndpointEligibility {
  readonly fev1: boolean;
  readonly fvc: boolean;
  readonly reasons: readonly string[];
}

/** The whole first-pass analysis of one set. */
export interface SessionAnalysis {
  readonly protocol: { readonly id: string; readonly version: number };
  readonly efforts: readonly EffortAnalysis[];
  readonly fev1: Repeatability;
  readonly fvc: Repeatability;
  /** FEV0.75 grade, for young children only. */
  readonly fev075: Repeatability | null;
  readonly reported: ReportedValues;
  /** Largest acceptable FEV0.75 (usable when none acceptable), for young children only. */
  readonly reportedFev075L: number | null;
  /** Null without demographics and equations. */
  readonly predicted: SessionPredicted | null;
  readonly endpoint: EndpointEligibility;
  /** Session-level remarks for the reader (too many efforts, goal not reached...). */
  readonly notes: readonly string[];
}

/** Options of `analyzeSession`. */
export interface SessionAnalysisOptions {
  /** Age also selects the child grade tolerances and FEV0.75 rules. */
  readonly demographics?: Partial<Demographics>;
  readonly equations?: ReferenceEquations;
  /** Build each effort's plot series (for the reader's screen); off by default, the analysis does not need them. */
  readonly plots?: boolean;
}

function gradedValues(efforts: readonly EffortAnalysis[], pick: (effort: EffortAnalysis) => { valueL: number | null; verdict: string }): GradedValue[] {
  return efforts.map((effort) => {
    const { valueL, verdict } = pick(effort);
    return { effortIndex: effort.index, valueL, acceptable: verdict === 'acceptable', usable: verdict === 'usable' };
  });
}

function completeDemographics(demographics: Partial<Demographics> | undefined): Demographics | null {
  if (!demographics) return null;
  const { ageYears, heightCm, sex } = demographics;
  if (ageYears === undefined || heightCm === undefined || sex === undefined) return null;
  return { ageYears, heightCm, sex, ...(demographics.ethnicity ? { ethnicity: demographics.ethnicity } : {}) };
}

/** Whether the reported FEV1 and FVC may serve as study endpoints under the protocol's tightening. */
export function endpointEligibility(fev1: Repeatability, fvc: Repeatability, protocol: ResolvedProtocol): EndpointEligibility {
  const reasons: string[] = [];
  const { minGradeForEndpoint, minAcceptableEfforts } = protocol.study;
  const judge = (name: string, grade: Repeatability): boolean => {
    let eligible = true;
    if (!gradeAtLeast(grade.grade, minGradeForEndpoint)) {
      reasons.push(`${name} grade ${grade.grade} is below the study minimum ${minGradeForEndpoint}`);
      eligible = false;
    }
    if (grade.acceptableCount < minAcceptableEfforts) {
      reasons.push(`${name} has ${grade.acceptableCount} acceptable effort(s); the study needs ${minAcceptableEfforts}`);
      eligible = false;
    }
    return eligible;
  };
  return { fev1: judge('FEV1', fev1), fvc: judge('FVC', fvc), reasons };
}

/**
 * Analyses the efforts of one set (in the order given) under a resolved protocol.
 * Throws what the per-effort analysis throws (`SpirometryInputError`) for an
 * effort that cannot be analysed.
 */
export function analyzeSession(
  recordings: readonly Recording[],
  protocol: ResolvedProtocol,
  options: SessionAnalysisOptions = {},
): SessionAnalysis {
  const ageYears = options.demographics?.ageYears;
  const effortOptions = { plot: options.plots === true };
  const single = recordings.map((recording) => analyzeRecording(recording, protocol.engine, effortOptions));
  const evidence = applySessionFindings(
    single.map((effort) => ({ metrics: effort.metrics, findings: effort.findings })),
    protocol,
    ageYears,
  );
  const efforts: EffortAnalysis[] = evidence.map((effort, index) => ({
    index,
    label: recordings[index].label,
    metrics: effort.metrics,
    findings: effort.findings,
    verdicts: judgeEffort(effort.metrics, effort.findings, protocol, ageYears),
    plot: single[index].plot,
  }));

  const fev1 = gradeSession(
    gradedValues(efforts, (effort) => ({ valueL: effort.metrics.fev1L, verdict: effort.verdicts.fev1.verdict })),
    protocol,
    ageYears,
  );
  const fvc = gradeSession(
    gradedValues(efforts, (effort) => ({ valueL: effort.metrics.fvcL, verdict: effort.verdicts.fvc.verdict })),
    protocol,
    ageYears,
  );
  const child = isChildAge(protocol, ageYears);
  const fev075Values = gradedValues(efforts, (effort) => ({
    valueL: effort.metrics.fev075L,
    verdict: effort.verdicts.fev075?.verdict ?? 'not_acceptable',
  }));
  const fev075 = child ? gradeSession(fev075Values, protocol, ageYears) : null;
  const reportedFev075L = child ? largestOf(fev075Values) : null;

  const reported = selectReportedValues(
    efforts.map((effort) => ({
      metrics: effort.metrics,
      fev1Verdict: effort.verdicts.fev1.verdict,
      fvcVerdict: effort.verdicts.fvc.verdict,
    })),
  );

  let predicted: SessionPredicted | null = null;
  const demographics = completeDemographics(options.demographics);
  if (demographics && options.equations) {
    const measured: Partial<Record<ReferenceParameter, number>> = {};
    if (reported.fev1) measured.fev1 = reported.fev1.valueL;
    if (reported.fvc) measured.fvc = reported.fvc.valueL;
    if (reported.fev1FvcRatio !== null) measured.fev1Fvc = reported.fev1FvcRatio;
    if (reported.fef2575LPerS !== null) measured.fef2575 = reported.fef2575LPerS;
    if (reported.pefLPerS !== null) measured.pef = reported.pefLPerS;
    if (reported.fev6L !== null) measured.fev6 = reported.fev6L;
    const values = predictAll(options.equations, demographics, measured);
    predicted = { ...values, equationsId: options.equations.id, equationsLabel: options.equations.label };
  }

  const notes: string[] = [];
  if (!child && efforts.length > protocol.session.maxEffortsAdult) {
    notes.push(`${efforts.length} efforts: more than the ${protocol.session.maxEffortsAdult} recommended for adults`);
  }
  const goal = protocol.session.goalAcceptableEfforts;
  if (fev1.acceptableCount < goal) notes.push(`${fev1.acceptableCount} acceptable FEV1 of the goal of ${goal}`);
  if (fvc.acceptableCount < goal) notes.push(`${fvc.acceptableCount} acceptable FVC of the goal of ${goal}`);

  return {
    protocol: { id: protocol.id, version: protocol.version },
    efforts,
    fev1,
    fvc,
    fev075,
    reported,
    reportedFev075L,
    predicted,
    endpoint: endpointEligibility(fev1, fvc, protocol),
    notes,
  };
}

/** Largest acceptable value, else largest usable one. */
function largestOf(values: readonly GradedValue[]): number | null {
  for (const tier of [(value: GradedValue) => value.acceptable, (value: GradedValue) => value.usable]) {
    const candidates = values.filter((value) => tier(value) && value.valueL !== null).map((value) => value.valueL as number);
    if (candidates.length > 0) return Math.max(...candidates);
  }
  return null;
}
