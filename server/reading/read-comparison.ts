/**
 * Comparison of the two independent reads of a dual-read session, and what follows from it.
 *
 * Agreement rule (common practice for blinded dual reads in central over-reading): two reads
 * agree when they give identical FEV1 and FVC verdicts on every effort, identical FEV1 and FVC
 * grades, and report FEV1 and FVC from the same efforts. With identical verdicts the engine
 * selects the same efforts, so the last condition only bites when a reader overrode the selection;
 * it is kept because the final read's reported values go to the endpoint dataset. There is no
 * tolerance band: verdicts and grades are categories, and reported values come from the same file.
 */
import { readResultSchema, type EffortVerdict, type ReadResult } from '../../shared/contracts/reading.js';
import { verdictSchema } from '../../shared/contracts/sessions.js';
import { SYSTEM_ACTOR, type AuditActor, type AuditTrail } from '../audit/audit-trail.js';
import type { AdjudicationRepository, DualReadRow } from './adjudication-repository.js';

/** What the comparison needs of one read. */
export interface ComparableRead {
  readonly verdicts: readonly Pick<EffortVerdict, 'effortIndex' | 'fev1Verdict' | 'fvcVerdict'>[];
  readonly result: Pick<ReadResult, 'fev1Grade' | 'fvcGrade' | 'fev1EffortIndex' | 'fvcEffortIndex' | 'reportedFev1L' | 'reportedFvcL'>;
}

/** The outcome of comparing two reads. */
export interface ReadComparison {
  /** Whether the reads agree under the rule above. */
  readonly agree: boolean;
  /** Each difference in plain words, readers named only "Read A" and "Read B". */
  readonly differences: string[];
}

const VERDICT_WORDS: Record<EffortVerdict['fev1Verdict'], string> = {
  acceptable: 'acceptable',
  usable: 'usable',
  not_acceptable: 'not acceptable',
};

/** The label readers see for an effort (0-based index → "Effort 1"). */
export function effortLabel(effortIndex: number): string {
  return `Effort ${effortIndex + 1}`;
}

/** Compares read A with read B; see the agreement rule at the top of this file. */
export function compareReads(a: ComparableRead, b: ComparableRead): ReadComparison {
  const differences: string[] = [];
  const verdictsA = new Map(a.verdicts.map((verdict) => [verdict.effortIndex, verdict]));
  const verdictsB = new Map(b.verdicts.map((verdict) => [verdict.effortIndex, verdict]));
  const effortIndices = [...new Set([...verdictsA.keys(), ...verdictsB.keys()])].sort((x, y) => x - y);
  for (const effortIndex of effortIndices) {
    const label = effortLabel(effortIndex);
    const verdictA = verdictsA.get(effortIndex);
    const verdictB = verdictsB.get(effortIndex);
    if (!verdictA || !verdictB) {
      differences.push(`${label}: ${verdictA ? 'Read B' : 'Read A'} has no verdict`);
      continue;
    }
    for (const [name, key] of [
      ['FEV1', 'fev1Verdict'],
      ['FVC', 'fvcVerdict'],
    ] as const) {
      if (verdictA[key] !== verdictB[key]) {
        differences.push(`${label} ${name}: Read A ${VERDICT_WORDS[verdictA[key]]}, Read B ${VERDICT_WORDS[verdictB[key]]}`);
      }
    }
  }
  for (const [name, key] of [
    ['FEV1', 'fev1Grade'],
    ['FVC', 'fvcGrade'],
  ] as const) {
    if (a.result[key] !== b.result[key]) differences.push(`${name} grade: Read A ${a.result[key]}, Read B ${b.result[key]}`);
  }
  for (const [name, indexKey, valueKey] of [
    ['FEV1', 'fev1EffortIndex', 'reportedFev1L'],
    ['FVC', 'fvcEffortIndex', 'reportedFvcL'],
  ] as const) {
    if (a.result[indexKey] !== b.result[indexKey]) {
      differences.push(
        `Reported ${name}: Read A ${reportedWords(a.result[indexKey], a.result[valueKey])}, Read B ${reportedWords(b.result[indexKey], b.result[valueKey])}`,
      );
    }
  }
  return { agree: differences.length === 0, differences };
}

function reportedWords(effortIndex: number | null, valueL: number | null): string {
  if (effortIndex === null || valueL === null) return 'none reported';
  return `${effortLabel(effortIndex)} (${valueL.toFixed(2)} L)`;
}

/** What {@link finaliseAfterSignedRead} works with. */
export interface FinaliseDependencies {
  readonly repository: AdjudicationRepository;
  readonly audit: AuditTrail;
  readonly clock: () => Date;
}

/** Where a session stands after one of its reads was signed. */
export type FinaliseOutcome =
  | { readonly status: 'waiting'; readonly sessionId: string }
  | { readonly status: 'final'; readonly sessionId: string; readonly finalReadId: string }
  | { readonly status: 'adjudication'; readonly sessionId: string; readonly differences: readonly string[] };

/**
 * Called after a read of a dual-read session (or an adjudication read) is signed, inside the
 * signing transaction or on its own. When both the first and the second read are signed they are
 * compared: agreement makes the session final with the earlier signed read as its final read,
 * disagreement sends it to adjudication. A signed adjudication read makes the session final.
 * Tidemark acts here, not the signer (the signer's own act is the read's `sign` event), so the
 * audit rows carry the system actor unless another is given. The final read is recorded in the
 * audit row's newValue as `finalReadId` (the reads table has no column for it; {@link pickFinalRead}
 * finds it again from the reads).
 */
export function finaliseAfterSignedRead(deps: FinaliseDependencies, readId: string, actor: AuditActor = SYSTEM_ACTOR): FinaliseOutcome {
  return deps.audit.write(actor, (record) => {
    const read = deps.repository.findRead(readId);
    if (!read || read.status !== 'signed') throw new Error(`finaliseAfterSignedRead: read ${readId} is not signed`);
    const session = deps.repository.findSession(read.sessionId)!;
    const at = deps.clock().toISOString();
    const where = { studyId: session.studyId, siteId: session.siteId, entity: 'session', entityId: session.id } as const;

    if (read.kind === 'adjudication') {
      if (session.status !== 'adjudication') return { status: 'waiting', sessionId: session.id };
      deps.repository.updateSession(session.id, { status: 'final', feedbackReleasedAt: at, updatedAt: at });
      record({
        ...where,
        action: 'finalise',
        oldValue: { status: session.status, feedbackReleasedAt: session.feedbackReleasedAt },
        newValue: { status: 'final', finalReadId: read.id, decidedBy: 'adjudication', feedbackReleasedAt: at },
      });
      return { status: 'final', sessionId: session.id, finalReadId: read.id };
    }

    const pair = signedPairOf(deps.repository.readsOfSession(session.id));
    if (!pair || !['checked', 'in-reading'].includes(session.status)) return { status: 'waiting', sessionId: session.id };
    const [first, second] = pair;

    const comparison = compareReads(comparableOf(deps.repository, first), comparableOf(deps.repository, second));
    const comparedReadIds = [first.id, second.id];
    if (comparison.agree) {
      const finalRead = pickFinalRead([first, second])!;
      deps.repository.updateSession(session.id, { status: 'final', feedbackReleasedAt: at, updatedAt: at });
      record({
        ...where,
        action: 'finalise',
        oldValue: { status: session.status, feedbackReleasedAt: session.feedbackReleasedAt },
        newValue: { status: 'final', finalReadId: finalRead.id, decidedBy: 'agreement', comparedReadIds, feedbackReleasedAt: at },
      });
      return { status: 'final', sessionId: session.id, finalReadId: finalRead.id };
    }
    deps.repository.updateSession(session.id, { status: 'adjudication', updatedAt: at });
    record({
      ...where,
      action: 'send-to-adjudication',
      oldValue: { status: session.status },
      newValue: { status: 'adjudication', comparedReadIds, differences: comparison.differences },
    });
    return { status: 'adjudication', sessionId: session.id, differences: comparison.differences };
  });
}

/** What a stored read contributes to the final read decision. */
export type FinalReadCandidate = Pick<DualReadRow, 'id' | 'kind' | 'status' | 'signedAt'>;

/**
 * The final read among a final session's reads: the signed adjudication read if there is one,
 * otherwise the earliest signed first or second read (the only read of a single design, or the
 * earlier of an agreeing pair, which agree on everything that reaches the site and the dataset).
 */
export function pickFinalRead<T extends FinalReadCandidate>(reads: readonly T[]): T | undefined {
  const signed = reads.filter((read) => read.status === 'signed' && read.signedAt !== null);
  const bySigning = (a: T, b: T) => a.signedAt!.localeCompare(b.signedAt!) || a.id.localeCompare(b.id);
  const adjudication = signed.filter((read) => read.kind === 'adjudication').sort(bySigning).at(-1);
  return adjudication ?? signed.filter((read) => read.kind !== 'adjudication').sort(bySigning)[0];
}

/** The signed first read and signed second read of a session (the latest of each), or undefined until both are signed. */
export function signedPairOf<T extends Pick<DualReadRow, 'kind' | 'status'>>(reads: readonly T[]): [T, T] | undefined {
  const latest = (kind: 'first' | 'second') => reads.filter((read) => read.kind === kind && read.status === 'signed').at(-1);
  const first = latest('first');
  const second = latest('second');
  return first && second ? [first, second] : undefined;
}

/** A signed read's verdicts and the result stored when it was signed. */
export function comparableOf(repository: Pick<AdjudicationRepository, 'verdictsOf'>, read: DualReadRow): ComparableRead & { result: ReadResult } {
  const verdicts = repository.verdictsOf(read.id).map((row) => ({
    effortIndex: row.effortIndex,
    fev1Verdict: verdictSchema.parse(row.fev1Verdict),
    fvcVerdict: verdictSchema.parse(row.fvcVerdict),
  }));
  return { verdicts, result: readResultSchema.parse(JSON.parse(read.resultJson ?? 'null')) };
}
