/**
 * Checks on a reader's draft: which efforts a verdict may name, what changed, and the 409
 * answer to a stale form. Pure, no I/O; labels are "Effort n", never the file's names.
 */
import type { EffortVerdict, SaveRead } from '../../shared/contracts/reading.js';
import { FINDING_CATALOGUE } from '../../shared/spirometry/finding-codes.js';
import { AppError } from '../http/app-error.js';
import { effortLabel } from './read-comparison.js';
import { toEffortVerdict } from './read-workspace.js';
import type { ReadRow, ReadVerdictRow } from './reading-repository.js';

/** One field where the saved read differs from the form sent with a stale version. */
export interface StaleReadChange {
  readonly field: string;
  readonly effortIndex: number | null;
  readonly saved: unknown;
  readonly yours: unknown;
}

/** 422 unless every verdict names an effort of the read's file, once, with known finding codes. */
export function assertVerdictsFit(verdicts: readonly EffortVerdict[], effortIndices: readonly number[]): void {
  const known = [...effortIndices].sort((a, b) => a - b);
  const seen = new Set<number>();
  for (const verdict of verdicts) {
    if (!known.includes(verdict.effortIndex)) {
      throw new AppError(
        422,
        'effort-unknown',
        `${effortLabel(verdict.effortIndex)} (effortIndex ${verdict.effortIndex}) is not an effort of this read, which has ` +
          `${known.map(effortLabel).join(', ')}; nothing was saved.`,
        { effortIndex: verdict.effortIndex, knownEffortIndices: known },
      );
    }
    if (seen.has(verdict.effortIndex)) {
      throw new AppError(422, 'effort-duplicate', `${effortLabel(verdict.effortIndex)} has two verdicts in the form; send one per effort.`, {
        effortIndex: verdict.effortIndex,
      });
    }
    seen.add(verdict.effortIndex);
    const unknownFinding = verdict.findings.find((code) => !(code in FINDING_CATALOGUE));
    if (unknownFinding !== undefined) {
      throw new AppError(
        422,
        'finding-unknown',
        `${effortLabel(verdict.effortIndex)}: "${unknownFinding}" is not a finding code (see /api/formats/finding-codes); nothing was saved.`,
        { effortIndex: verdict.effortIndex, finding: unknownFinding },
      );
    }
  }
}

/** Whether a saved verdict row changes anything a reader sees. */
export function verdictDiffers(a: ReadVerdictRow, b: ReadVerdictRow): boolean {
  return a.fev1Verdict !== b.fev1Verdict || a.fvcVerdict !== b.fvcVerdict || a.findingsJson !== b.findingsJson || a.comment !== b.comment;
}

/** A verdict as the audit trail records it, with the engine's suggestion beside it. */
export function auditVerdict(row: ReadVerdictRow) {
  return {
    effortIndex: row.effortIndex,
    fev1Verdict: row.fev1Verdict,
    fvcVerdict: row.fvcVerdict,
    findings: JSON.parse(row.findingsJson) as string[],
    comment: row.comment,
    suggested: { fev1: row.suggestedFev1Verdict, fvc: row.suggestedFvcVerdict },
  };
}

/**
 * 409 'stale-read': the read moved on since the caller's version. With the caller's form, the
 * details list each field where the saved read now differs from it, so nothing typed is lost.
 */
export function staleRead(current: ReadRow, stored: readonly ReadVerdictRow[], form?: SaveRead): AppError {
  const changed: StaleReadChange[] = [];
  if (form) {
    const byIndex = new Map(stored.map((row) => [row.effortIndex, toEffortVerdict(row)]));
    for (const yours of form.verdicts) {
      const saved = byIndex.get(yours.effortIndex);
      if (!saved) continue;
      const label = effortLabel(yours.effortIndex);
      const fields = [
        ['FEV1 verdict', saved.fev1Verdict, yours.fev1Verdict],
        ['FVC verdict', saved.fvcVerdict, yours.fvcVerdict],
        ['findings', saved.findings, yours.findings],
        ['comment', saved.comment, yours.comment],
      ] as const;
      for (const [name, savedValue, yourValue] of fields) {
        if (JSON.stringify(savedValue) !== JSON.stringify(yourValue)) {
          changed.push({ field: `${label} ${name}`, effortIndex: yours.effortIndex, saved: savedValue, yours: yourValue });
        }
      }
    }
    if (form.feedbackText !== current.feedbackText) {
      changed.push({ field: 'feedback to the site', effortIndex: null, saved: current.feedbackText, yours: form.feedbackText });
    }
  }
  const yourVersion = form?.version;
  const listed = changed.length ? ` It now differs from your form in: ${changed.map((change) => change.field).join('; ')}.` : '';
  return AppError.conflict(
    `This read was changed since you opened it (it is at version ${current.version}${yourVersion ? `, your form at ${yourVersion}` : ''}).${listed} ` +
      'Reload the read, check it, and try again; nothing was changed.',
    { currentVersion: current.version, changed },
    'stale-read',
  );
}
