/**
 * Per-effort FEV1 and FVC verdicts from the acceptability table of the protocol
 * rule set (ATS/ERS 2019 Table 7, reconstructed from memory). The table itself is
 * data; this file only decides which evidence fails which criterion.
 */
import type { EffortMetrics, Finding, FindingCode, Verdict } from './model.js';
import type { AcceptabilityCriterion, AcceptabilityCriterionId, ResolvedProtocol } from './protocol.js';
import { isChildAge } from './protocol.js';

/** One criterion an effort failed, and what that costs the value judged. */
export interface CriterionFailure {
  readonly criterion: AcceptabilityCriterionId | 'value-missing';
  /** Rule ids of the protocol that made this failure count. */
  readonly ruleIds: readonly string[];
  /** The findings that failed it (empty for EOFE not met or a missing value). */
  readonly findingCodes: readonly FindingCode[];
  /** Whether the failure also rules out "usable" (otherwise only "acceptable"). */
  readonly blocksUsable: boolean;
  readonly message: string;
}

/** The verdict on one value of one effort, with every failed criterion that matters for it. */
export interface ValueVerdict {
  readonly verdict: Verdict;
  readonly failures: readonly CriterionFailure[];
}

/** Verdicts on one effort. */
export interface EffortVerdicts {
  readonly fev1: ValueVerdict;
  readonly fvc: ValueVerdict;
  /** For young children: the verdict on FEV0.75, with the first-second criteria over 0.75 s. */
  readonly fev075: ValueVerdict | null;
}

const FIRST_SECOND_CRITERIA: ReadonlySet<AcceptabilityCriterionId> = new Set([
  'cough-first-second',
  'glottic-closure-first-second',
]);

/** Key under which the per-effort findings carry their time after time zero (s). */
const FINDING_TIME_KEY = 'atS';

/**
 * When a first-second finding happened, in seconds after time zero, if the
 * finding says so; null when it does not (then it is taken to fall in the window).
 */
function findingTimeS(finding: Finding): number | null {
  const value = finding.values[FINDING_TIME_KEY];
  return typeof value === 'number' && Number.isFinite(value) ? value : null;
}

function describe(criterion: AcceptabilityCriterionId, codes: readonly FindingCode[], metrics: EffortMetrics): string {
  if (criterion === 'eofe' && !metrics.endOfTest.met) {
    return `no end of forced expiration: last-second volume change ${metrics.endOfTest.lastSecondVolumeChangeL.toFixed(3)} L, FET ${metrics.fetS.toFixed(2)} s`;
  }
  return `${criterion}: ${codes.join(', ')}`;
}

/** The findings (and metrics) that fail one criterion, within the first-second window when it has one. */
function failingCodes(
  criterion: AcceptabilityCriterion,
  findings: readonly Finding[],
  metrics: EffortMetrics,
  firstSecondWindowS: number,
): { failed: boolean; codes: FindingCode[] } {
  const codes: FindingCode[] = [];
  for (const finding of findings) {
    if (!criterion.findingCodes.includes(finding.code)) continue;
    if (FIRST_SECOND_CRITERIA.has(criterion.id) && firstSecondWindowS < 1) {
      const timeS = findingTimeS(finding);
      if (timeS !== null && timeS > firstSecondWindowS) continue;
    }
    if (!codes.includes(finding.code)) codes.push(finding.code);
  }
  const eofeMissing = criterion.id === 'eofe' && !metrics.endOfTest.met;
  return { failed: codes.length > 0 || eofeMissing, codes };
}

function judgeValue(
  value: 'fev1' | 'fvc',
  present: boolean,
  metrics: EffortMetrics,
  findings: readonly Finding[],
  protocol: ResolvedProtocol,
  firstSecondWindowS: number,
): ValueVerdict {
  const failures: CriterionFailure[] = [];
  if (!present) {
    failures.push({
      criterion: 'value-missing',
      ruleIds: [],
      findingCodes: [],
      blocksUsable: true,
      message: `no ${value === 'fev1' ? (firstSecondWindowS < 1 ? 'FEV0.75' : 'FEV1') : 'FVC'}: the blow is too short`,
    });
  }
  const acceptableColumn = value === 'fev1' ? 'fev1-acceptable' : 'fvc-acceptable';
  const usableColumn = value === 'fev1' ? 'fev1-usable' : 'fvc-usable';
  for (const criterion of protocol.acceptability) {
    const neededForAcceptable = criterion.requiredFor[acceptableColumn];
    const neededForUsable = criterion.requiredFor[usableColumn];
    if (!neededForAcceptable && !neededForUsable) continue;
    const { failed, codes } = failingCodes(criterion, findings, metrics, firstSecondWindowS);
    if (!failed) continue;
    const ruleIds = [`acceptability.${criterion.id}.${acceptableColumn}`];
    if (neededForUsable) ruleIds.push(`acceptability.${criterion.id}.${usableColumn}`);
    failures.push({
      criterion: criterion.id,
      ruleIds,
      findingCodes: codes,
      blocksUsable: neededForUsable,
      message: describe(criterion.id, codes, metrics),
    });
  }
  const verdict: Verdict =
    failures.length === 0 ? 'acceptable' : failures.some((failure) => failure.blocksUsable) ? 'not_acceptable' : 'usable';
  return { verdict, failures };
}

/**
 * Suggests FEV1 and FVC verdicts for one effort from its metrics and findings
 * (after the session-level passes). A value is acceptable when it passes every
 * criterion required for "acceptable", else usable when it passes every criterion
 * required for "usable", else not acceptable. For children (age 6 or under) the
 * first-second criteria use the protocol's 0.75 s window for the FEV0.75 verdict.
 */
export function judgeEffort(
  metrics: EffortMetrics,
  findings: readonly Finding[],
  protocol: ResolvedProtocol,
  ageYears?: number,
): EffortVerdicts {
  const child = isChildAge(protocol, ageYears);
  return {
    fev1: judgeValue('fev1', metrics.fev1L !== null, metrics, findings, protocol, 1),
    fvc: judgeValue('fvc', Number.isFinite(metrics.fvcL) && metrics.fvcL > 0, metrics, findings, protocol, 1),
    fev075: child
      ? judgeValue('fev1', metrics.fev075L !== null, metrics, findings, protocol, protocol.children.firstSecondWindowS)
      : null,
  };
}
