/**
 * Turns stored reads, verdicts and efforts into what a reader sees, and into the content a
 * read's signature is bound to. Nothing here names a site, subject, date, file or person.
 */
import type * as z from 'zod';
import type { EffortVerdict, ReadResult, readEffortSchema } from '../../shared/contracts/reading.js';
import type { EffortMetrics, Verdict } from '../../shared/spirometry/model.js';
import type { ResolvedProtocol } from '../../shared/spirometry/protocol.js';
import { summarizeRead, type JudgedEffort, type ReadSummary } from '../../shared/spirometry/read-summary.js';
import type { EffortRow } from '../sessions/session-repository.js';
import { effortLabel } from './read-comparison.js';
import type { ReadVerdictRow } from './reading-repository.js';

type ReadEffort = z.infer<typeof readEffortSchema>;

/** One effort for the reader: the engine's numbers, findings and suggestions, labelled "Effort n". */
export function toReadEffort(row: EffortRow): ReadEffort {
  return {
    index: row.effortIndex,
    label: effortLabel(row.effortIndex),
    metrics: JSON.parse(row.metricsJson) as Record<string, unknown>,
    findings: JSON.parse(row.findingsJson) as ReadEffort['findings'],
    suggestedFev1Verdict: row.suggestedFev1Verdict as Verdict,
    suggestedFvcVerdict: row.suggestedFvcVerdict as Verdict,
    verdictReasons: JSON.parse(row.verdictReasonsJson) as ReadEffort['verdictReasons'],
  };
}

/** A stored verdict row as the reader's form holds it. */
export function toEffortVerdict(row: ReadVerdictRow): EffortVerdict {
  return {
    effortIndex: row.effortIndex,
    fev1Verdict: row.fev1Verdict as Verdict,
    fvcVerdict: row.fvcVerdict as Verdict,
    findings: JSON.parse(row.findingsJson) as string[],
    comment: row.comment,
  };
}

/** The starting verdicts of a new read: the engine's suggestions and its finding codes, no comment. */
export function suggestedVerdictRows(readId: string, effortRows: readonly EffortRow[]): ReadVerdictRow[] {
  return effortRows.map((effort) => ({
    readId,
    effortId: effort.id,
    effortIndex: effort.effortIndex,
    fev1Verdict: effort.suggestedFev1Verdict,
    fvcVerdict: effort.suggestedFvcVerdict,
    suggestedFev1Verdict: effort.suggestedFev1Verdict,
    suggestedFvcVerdict: effort.suggestedFvcVerdict,
    findingsJson: JSON.stringify((JSON.parse(effort.findingsJson) as { code: string }[]).map((finding) => finding.code)),
    comment: '',
  }));
}

/** The session result that follows from the verdicts, by the shared engine's rules. */
export function resultOfVerdicts(
  effortRows: readonly EffortRow[],
  verdicts: readonly Pick<EffortVerdict, 'effortIndex' | 'fev1Verdict' | 'fvcVerdict'>[],
  protocol: ResolvedProtocol,
  ageYears: number,
): ReadResult {
  const byIndex = new Map(verdicts.map((verdict) => [verdict.effortIndex, verdict]));
  const judged: JudgedEffort[] = effortRows.map((effort) => ({
    index: effort.effortIndex,
    metrics: JSON.parse(effort.metricsJson) as EffortMetrics,
    fev1Verdict: byIndex.get(effort.effortIndex)?.fev1Verdict ?? (effort.suggestedFev1Verdict as Verdict),
    fvcVerdict: byIndex.get(effort.effortIndex)?.fvcVerdict ?? (effort.suggestedFvcVerdict as Verdict),
  }));
  return toReadResult(summarizeRead(judged, protocol, ageYears));
}

/** The engine's read summary in the API's result shape. */
export function toReadResult(summary: ReadSummary): ReadResult {
  return {
    fev1Grade: summary.fev1.grade,
    fvcGrade: summary.fvc.grade,
    reportedFev1L: summary.reported.fev1?.valueL ?? null,
    reportedFvcL: summary.reported.fvc?.valueL ?? null,
    fev1FvcRatio: summary.reported.fev1FvcRatio,
    fev1EffortIndex: summary.reported.fev1?.effortIndex ?? null,
    fvcEffortIndex: summary.reported.fvc?.effortIndex ?? null,
    endpointEligible: { fev1: summary.endpoint.fev1, fvc: summary.endpoint.fvc, reasons: [...summary.endpoint.reasons] },
  };
}

/** The rule set as JSON, so the browser resolves the same protocol and recomputes grades live. */
export function protocolRuleSetOf(protocol: ResolvedProtocol): unknown {
  return {
    id: protocol.id,
    version: protocol.version,
    title: protocol.title,
    basedOn: protocol.basedOn,
    rules: [...protocol.rules.values()],
  };
}

/** Where a reader's verdict departs from the engine's suggestion. */
export interface VerdictOverride {
  readonly effortIndex: number;
  readonly fev1?: { readonly suggested: string; readonly chosen: string };
  readonly fvc?: { readonly suggested: string; readonly chosen: string };
}

/** The reader's departure from the engine on one effort, or undefined when they kept both suggestions. */
export function overrideOf(row: Pick<ReadVerdictRow, 'effortIndex' | 'fev1Verdict' | 'fvcVerdict' | 'suggestedFev1Verdict' | 'suggestedFvcVerdict'>): VerdictOverride | undefined {
  const fev1 = row.fev1Verdict !== row.suggestedFev1Verdict ? { suggested: row.suggestedFev1Verdict, chosen: row.fev1Verdict } : undefined;
  const fvc = row.fvcVerdict !== row.suggestedFvcVerdict ? { suggested: row.suggestedFvcVerdict, chosen: row.fvcVerdict } : undefined;
  if (!fev1 && !fvc) return undefined;
  return { effortIndex: row.effortIndex, ...(fev1 ? { fev1 } : {}), ...(fvc ? { fvc } : {}) };
}

/** What a read's signature covers: its verdicts, feedback and result, and the exact file read. */
export interface SignedReadContent {
  readonly readId: string;
  readonly verdicts: readonly EffortVerdict[];
  readonly feedbackText: string;
  readonly result: ReadResult;
  readonly upload: { readonly id: string; readonly sha256: string };
}

/** Builds the signed content in a fixed shape (verdicts by effort), the same at signing and at every later check. */
export function signedReadContent(input: {
  readId: string;
  verdicts: readonly EffortVerdict[];
  feedbackText: string;
  result: unknown;
  upload: { id: string; sha256: string };
}): SignedReadContent {
  return {
    readId: input.readId,
    verdicts: [...input.verdicts].sort((a, b) => a.effortIndex - b.effortIndex),
    feedbackText: input.feedbackText,
    result: input.result as ReadResult,
    upload: { id: input.upload.id, sha256: input.upload.sha256 },
  };
}
