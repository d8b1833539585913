import type { AdjudicationView, Agreement, QueueItem, QueuePage } from '../../shared/contracts/reading.js';
import type { AuditTrail } from '../audit/audit-trail.js';
import type { Principal } from '../auth/principal.js';
import { AppError } from '../http/app-error.js';
import { studyActor } from '../http/access.js';
import { coveringLock } from '../locks/lock-scope.js';
import type { SessionRepository } from '../sessions/session-repository.js';
import type { StudyRepository, StudyRow } from '../studies/study-repository.js';
import type { AdjudicationCandidate, AdjudicationRepository, DualReadRow } from './adjudication-repository.js';
import type { QueueTokens } from './queue-token.js';
import { studyAgreement, type ReadForAgreement } from './agreement.js';
import { comparableOf, compareReads, signedPairOf } from './read-comparison.js';
import { readerBlinding } from './read-queue-rules.js';
import { toEffortVerdict } from './read-workspace.js';
import type { ReadingService } from './reading-service.js';

/** Why a session in adjudication is not open to an adjudicator. */
type Unavailable = 'was-reader' | 'already-claimed';

/** A session waiting for adjudication with the two reads that disagree. */
interface DisputedSession {
  readonly candidate: AdjudicationCandidate;
  readonly readA: DualReadRow;
  readonly readB: DualReadRow;
  readonly reads: readonly DualReadRow[];
}

/**
 * The adjudicator's side of dual reading: a queue of sessions whose two reads disagree (never a
 * session the adjudicator read themselves), claims that open an adjudication read with the
 * engine's suggestions, and the two reads side by side as "Read A" and "Read B", blinded like the
 * reader's workspace. Saving and signing the adjudication read go through the reads routes.
 */
export class AdjudicationService {
  constructor(
    private readonly repository: AdjudicationRepository,
    private readonly sessions: SessionRepository,
    private readonly studies: StudyRepository,
    private readonly reading: ReadingService,
    private readonly tokens: QueueTokens,
    private readonly audit: AuditTrail,
    private readonly clock: () => Date,
  ) {}

  /** Sessions awaiting adjudication that this adjudicator may take, oldest due first. */
  queue(principal: Principal, studyId: string): QueuePage {
    const study = this.requireStudy(studyId);
    const blinding = readerBlinding(study.blindingJson);
    const now = this.clock().getTime();
    // One lock query for the queue, not one per disputed session.
    const locks = this.sessions.activeLocksOfStudy(studyId);
    const items: QueueItem[] = this.disputedSessions(studyId)
      .filter((disputed) => unavailableReason(disputed.reads, principal.user.id) === undefined)
      .filter(({ candidate: { session } }) => coveringLock(locks, { studyId, siteId: session.siteId, subjectId: session.subjectId, visitId: session.visitId, sessionId: session.id }) === undefined)
      .map(({ candidate, readA }) => ({
        queueToken: this.tokenFor(principal.user.id, candidate.session.id),
        kind: 'adjudication' as const,
        visitCode: blinding.showVisit ? candidate.visitCode : null,
        timepointCode: blinding.showTimepoint ? candidate.timepointCode : null,
        bronchodilator: blinding.showBronchodilator ? candidate.session.bronchodilator : null,
        effortCount: this.sessions.effortsOf(readA.uploadId).length,
        dueAt: readA.dueAt,
        overdue: Date.parse(readA.dueAt) < now,
      }))
      .sort((a, b) => a.dueAt.localeCompare(b.dueAt) || a.queueToken.localeCompare(b.queueToken));
    return { items, total: items.length, turnaroundHours: study.turnaroundHours };
  }

  /** Claims a disputed session: a new adjudication read with the engine's suggestions pre-filled. */
  claim(principal: Principal, studyId: string, queueToken: string): AdjudicationView {
    const actor = studyActor(principal, studyId, ['adjudicator']);
    this.requireStudy(studyId);
    const adjudicatorId = principal.user.id;
    const match = this.disputedSessions(studyId).find(
      (disputed) => this.tokenFor(adjudicatorId, disputed.candidate.session.id) === queueToken,
    );
    if (!match) {
      throw AppError.notFound('This item is not in your adjudication queue (it may be decided already); reload the queue.');
    }
    const read = this.audit.write(actor, (record) => {
      const session = this.sessions.findSessionById(match.candidate.session.id)!;
      this.reading.assertUnlocked(session);
      if (session.status !== 'adjudication') {
        throw AppError.conflict('This session no longer awaits adjudication; reload the queue.', undefined, 'not-awaiting-adjudication');
      }
      switch (unavailableReason(this.repository.readsOfSession(session.id), adjudicatorId)) {
        case 'was-reader':
          throw AppError.conflict(
            'You read this session yourself, so another adjudicator must decide it; it is not in your queue.',
            undefined,
            'was-reader',
          );
        case 'already-claimed':
          throw AppError.conflict('Another adjudicator has already taken this session. Take the next item.', undefined, 'already-claimed');
      }
      return this.reading.startRead(record, { session, readerId: adjudicatorId, kind: 'adjudication', dueAt: match.readA.dueAt });
    });
    return this.viewOf(read);
  }

  /** The adjudicator's own adjudication read, with the two disputed reads beside it. */
  view(principal: Principal, studyId: string, readId: string): AdjudicationView {
    const read = this.repository.findRead(readId);
    if (!read || read.studyId !== studyId || read.kind !== 'adjudication' || read.readerId !== principal.user.id) {
      throw AppError.notFound('There is no such adjudication among yours in this study.');
    }
    return this.viewOf(read);
  }

  /**
   * Reader agreement over every session with a signed first and second read of the same file.
   * Monitors and data managers see the readers' names: blinding keeps identities from readers and
   * treatment from monitors, not reader identity from those who oversee the reading.
   */
  agreement(studyId: string): Agreement {
    this.requireStudy(studyId);
    const bySession = new Map<string, DualReadRow[]>();
    for (const read of this.repository.signedDualReads(studyId)) {
      bySession.set(read.sessionId, [...(bySession.get(read.sessionId) ?? []), read]);
    }
    const pairs = [...bySession.values()]
      .map((reads) => signedPairOf(reads))
      .filter((pair): pair is [DualReadRow, DualReadRow] => pair !== undefined && pair[0].uploadId === pair[1].uploadId);
    const names = this.repository.userNames(pairs.flat().map((read) => read.readerId));
    const forAgreement = (read: DualReadRow): ReadForAgreement => {
      const { verdicts, result } = comparableOf(this.repository, read);
      return {
        readerId: read.readerId,
        readerName: names.get(read.readerId) ?? read.readerId,
        verdicts,
        fev1Grade: result.fev1Grade,
        fvcGrade: result.fvcGrade,
      };
    };
    return studyAgreement(pairs.map(([first, second]) => ({ first: forAgreement(first), second: forAgreement(second) })));
  }

  private viewOf(read: DualReadRow): AdjudicationView {
    const [readA, readB] = signedPairOf(this.repository.readsOfSession(read.sessionId)) ?? [];
    if (!readA || !readB) throw AppError.notFound('The two reads behind this adjudication are not there any more.');
    const comparableA = comparableOf(this.repository, readA);
    const comparableB = comparableOf(this.repository, readB);
    const compared = [
      { label: 'Read A', read: readA, result: comparableA.result },
      { label: 'Read B', read: readB, result: comparableB.result },
    ].map(({ label, read: shown, result }) => ({
      label,
      verdicts: this.repository.verdictsOf(shown.id).map(toEffortVerdict),
      result,
      feedbackText: shown.feedbackText,
    }));
    return {
      workspace: this.reading.workspaceOf(read),
      compared,
      differences: compareReads(comparableA, comparableB).differences,
    };
  }

  private disputedSessions(studyId: string): DisputedSession[] {
    const candidates = this.repository.sessionsInAdjudication(studyId);
    const readsBySession = this.repository.readsOfSessions(candidates.map((candidate) => candidate.session.id));
    const disputed: DisputedSession[] = [];
    for (const candidate of candidates) {
      const reads = readsBySession.get(candidate.session.id) ?? [];
      const pair = signedPairOf(reads);
      if (pair) disputed.push({ candidate, readA: pair[0], readB: pair[1], reads });
    }
    return disputed;
  }

  /** Distinct from the reader queue's token for the same session, so the two queues never share one. */
  private tokenFor(adjudicatorId: string, sessionId: string): string {
    return this.tokens.tokenFor(adjudicatorId, `adjudication:${sessionId}`);
  }

  private requireStudy(studyId: string): StudyRow {
    const study = this.studies.findStudy(studyId);
    if (!study) throw AppError.notFound('There is no such study.');
    return study;
  }
}

/**
 * Whether an adjudicator may take the session: not if they had any read of it (even a released
 * one, since they have seen it), nor while another adjudication read is in progress or signed.
 */
function unavailableReason(reads: readonly DualReadRow[], adjudicatorId: string): Unavailable | undefined {
  if (reads.some((read) => read.kind !== 'adjudication' && read.readerId === adjudicatorId)) return 'was-reader';
  if (reads.some((read) => read.kind === 'adjudication' && read.status !== 'withdrawn')) return 'already-claimed';
  return undefined;
}
