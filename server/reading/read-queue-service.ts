import type { QueuePage, ReadWorkspace } from '../../shared/contracts/reading.js';
import type { AuditTrail } from '../audit/audit-trail.js';
import type { Principal } from '../auth/principal.js';
import { AppError } from '../http/app-error.js';
import { studyActor } from '../http/access.js';
import type { SessionRepository } from '../sessions/session-repository.js';
import type { StudyRepository, StudyRow } from '../studies/study-repository.js';
import { needsDualRead } from './dual-read-rules.js';
import type { QueueTokens } from './queue-token.js';
import {
  AWAITING_READ_STATUSES,
  effectiveDualRead,
  liveOverReads,
  readDueAt,
  readEligibility,
  readerBlinding,
} from './read-queue-rules.js';
import type { ReadingRepository, ReadRow } from './reading-repository.js';
import type { ReadingService } from './reading-service.js';

/** Statuses whose sessions a queue token may still name: a claim on them answers 409, not 404. */
const CLAIMABLE_OR_DONE = [...AWAITING_READ_STATUSES, 'adjudication', 'final'];

/** Queue items returned at once; the total says how many more wait. */
const QUEUE_PAGE_SIZE = 200;

/**
 * The reader's queue (blinded, oldest due first, opaque per-reader tokens) and claims from it.
 * Claims run in an immediate transaction, so two readers racing for one session are decided by
 * the database: the second finds the first's read and is refused.
 */
export class ReadQueueService {
  constructor(
    private readonly repository: ReadingRepository,
    private readonly sessions: SessionRepository,
    private readonly studies: StudyRepository,
    private readonly reading: ReadingService,
    private readonly tokens: QueueTokens,
    private readonly audit: AuditTrail,
    private readonly clock: () => Date,
  ) {}

  /** Sessions awaiting a read that this reader may claim. */
  queue(principal: Principal, studyId: string): QueuePage {
    const study = this.requireStudy(studyId);
    const blinding = readerBlinding(study.blindingJson);
    const now = this.clock().getTime();
    // A reader works from the top of the queue: the oldest due sessions, with the total beside them.
    const { rows, total } = this.repository.queue.openSessions(study.id, principal.user.id, QUEUE_PAGE_SIZE);
    return {
      items: rows.map((row) => {
        const dueAt = readDueAt(row.checkedAt, study.turnaroundHours);
        return {
          queueToken: this.tokens.tokenFor(principal.user.id, row.sessionId),
          kind: row.liveOverReadCount === 0 ? 'first' : 'second',
          visitCode: blinding.showVisit ? row.visitCode : null,
          timepointCode: blinding.showTimepoint ? row.timepointCode : null,
          bronchodilator: blinding.showBronchodilator ? row.bronchodilator : null,
          effortCount: row.effortCount,
          dueAt,
          overdue: Date.parse(dueAt) < now,
        };
      }),
      total,
      turnaroundHours: study.turnaroundHours,
    };
  }

  /** Claims the session behind a queue token: a new read with the engine's suggestions pre-filled. */
  claim(principal: Principal, studyId: string, queueToken: string): ReadWorkspace {
    const actor = studyActor(principal, studyId, ['over-reader']);
    const study = this.requireStudy(studyId);
    const readerId = principal.user.id;
    const sessionId = this.sessionOfToken(studyId, readerId, queueToken);
    if (!sessionId) {
      throw AppError.notFound('This queue item is not one of your queue; reload the queue and pick again.');
    }
    const read = this.audit.write(actor, (record): ReadRow => {
      const session = this.sessions.findSessionById(sessionId)!;
      this.reading.assertUnlocked(session);
      const reads = this.repository.readsOfSession(session.id);
      const dualRead = effectiveDualRead(session.dualRead, liveOverReads(reads).length, () => needsDualRead(study, session.id));
      const eligibility = readEligibility({ status: session.status, dualRead }, reads, readerId);
      if (!eligibility.eligible) {
        switch (eligibility.reason) {
          case 'already-yours':
            throw AppError.conflict(
              'You already have a read of this session (see your reads); a session is never given to the same reader twice.',
              undefined,
              'already-yours',
            );
          case 'already-claimed':
            throw AppError.conflict(
              dualRead
                ? 'Both reads of this session are already claimed by other readers; it has left your queue. Take the next item.'
                : 'Another reader has already claimed this session; it has left your queue. Take the next item.',
              undefined,
              'already-claimed',
            );
          case 'not-awaiting-read':
            throw AppError.conflict('This session no longer awaits a read; reload the queue.', undefined, 'not-awaiting-read');
        }
      }
      const created = this.reading.startRead(record, {
        session,
        readerId,
        kind: eligibility.kind,
        dueAt: readDueAt(this.repository.queue.checkedAt(session.id)!, study.turnaroundHours),
      });
      if (session.status !== 'in-reading' || session.dualRead !== dualRead) {
        this.sessions.updateSession(session.id, { status: 'in-reading', dualRead, updatedAt: created.claimedAt });
        record({
          studyId,
          siteId: session.siteId,
          entity: 'session',
          entityId: session.id,
          action: 'start-reading',
          oldValue: { status: session.status, dualRead: session.dualRead },
          newValue: { status: 'in-reading', dualRead, readId: created.id },
        });
      }
      return created;
    });
    return this.reading.workspaceOf(read);
  }

  /**
   * The session a reader's queue token stands for. Tokens cannot be decoded, only recomputed, so
   * the top of the reader's queue (where tokens come from) is tried before every session that a
   * token may still name: at 100,000 sessions the latter takes about a second.
   */
  private sessionOfToken(studyId: string, readerId: string, queueToken: string): string | undefined {
    const matches = (sessionId: string) => this.tokens.tokenFor(readerId, sessionId) === queueToken;
    const onPage = this.repository.queue.openSessions(studyId, readerId, QUEUE_PAGE_SIZE).rows;
    return onPage.find((row) => matches(row.sessionId))?.sessionId ?? this.repository.queue.tokenCandidates(studyId, CLAIMABLE_OR_DONE).find(matches);
  }

  private requireStudy(studyId: string): StudyRow {
    const study = this.studies.findStudy(studyId);
    if (!study) throw AppError.notFound('There is no such study.');
    return study;
  }
}
