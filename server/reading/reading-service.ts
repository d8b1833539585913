import { randomBytes, randomUUID } from 'node:crypto';
import type { Logger } from 'pino';
import type { ReadKind, ReadWorkspace, SaveRead, SignatureManifestation, SignatureMeaning } from '../../shared/contracts/reading.js';
import type { SessionCurves } from '../../shared/contracts/sessions.js';
import type { ResolvedProtocol } from '../../shared/spirometry/protocol.js';
import type { AuditActor, AuditTrail, RecordChange } from '../audit/audit-trail.js';
import type { Principal } from '../auth/principal.js';
import { AppError } from '../http/app-error.js';
import { studyActor } from '../http/access.js';
import type { SessionRepository, SessionRow } from '../sessions/session-repository.js';
import type { SignatureService } from '../signatures/signature-service.js';
import type { StudyRow, StudyRepository } from '../studies/study-repository.js';
import type { UploadService } from '../uploads/upload-service.js';
import { effortLabel } from './read-comparison.js';
import { assertVerdictsFit, auditVerdict, staleRead, verdictDiffers } from './read-draft-rules.js';
import { liveOverReads, readerBlinding } from './read-queue-rules.js';
import {
  overrideOf,
  protocolRuleSetOf,
  resultOfVerdicts,
  signedReadContent,
  suggestedVerdictRows,
  toEffortVerdict,
  toReadEffort,
  type SignedReadContent,
} from './read-workspace.js';
import type { ReadingRepository, ReadRow, ReadVerdictRow } from './reading-repository.js';

/** What other parts of the reading room plug in. */
export interface ReadingHooks {
  /**
   * Called after the commit that made a session final, to tell the site its feedback is ready
   * (FeedbackService.onFinal). A failure is logged: the read is signed whatever the notice does.
   */
  readonly onFinal?: (sessionId: string) => void;
  /**
   * Called inside the signing transaction of a read that does not finalise on its own (a read of a
   * dual-read session, or an adjudication read): compares the reads and sets the session final or
   * in adjudication. It must not call onFinal; the reads service does once the transaction committed.
   */
  readonly finaliseAfterSignedRead?: (readId: string) => void;
}

/** The role a read's owner acts in for the audit trail, by kind of read. */
const READER_ROLES = { first: ['over-reader'], second: ['over-reader'], adjudication: ['adjudicator'] } as const;

/** Letters of blind codes: no 0/O or 1/I, so a code read aloud or retyped stays the same. */
const BLIND_CODE_ALPHABET = 'ABCDEFGHJKLMNPQRSTUVWXYZ23456789';

/**
 * The reader's own reads: the blinded workspace, saving verdicts (optimistic concurrency), releasing
 * a claim, and signing (21 CFR Part 11 signature bound to the read's content) with what follows:
 * the single design's read is final at once, other reads go to the comparison.
 */
export class ReadingService {
  constructor(
    private readonly repository: ReadingRepository,
    private readonly sessions: SessionRepository,
    private readonly studies: StudyRepository,
    private readonly uploads: UploadService,
    private readonly signatures: SignatureService,
    private readonly audit: AuditTrail,
    private readonly protocolFor: (ruleSetId: string) => ResolvedProtocol,
    private readonly clock: () => Date,
    private readonly logger: Logger,
    private readonly hooks: ReadingHooks = {},
  ) {}

  /** The caller's reads in the study, newest first. */
  myReads(principal: Principal, studyId: string) {
    return this.repository.readsOfReader(studyId, principal.user.id).map((read) => ({
      readId: read.id,
      blindCode: read.blindCode,
      kind: read.kind,
      status: read.status,
      dueAt: read.dueAt,
      signedAt: read.signedAt,
    }));
  }

  /** The workspace of one of the caller's reads. */
  workspace(principal: Principal, studyId: string, readId: string): ReadWorkspace {
    return this.workspaceOf(this.ownRead(principal, studyId, readId));
  }

  /** The blinded workspace of any read (for the adjudication view, which checks its own access). */
  workspaceOf(read: ReadRow): ReadWorkspace {
    const session = this.sessions.findSessionById(read.sessionId)!;
    const codes = this.sessions.sessionWithCodes(session.id)!;
    const study = this.studies.findStudy(read.studyId)!;
    const blinding = readerBlinding(study.blindingJson);
    const protocol = this.protocolOfStudy(study);
    const effortRows = this.sessions.effortsOf(read.uploadId);
    const verdicts = this.repository.verdictsOf(read.id).map(toEffortVerdict);
    const result =
      read.status === 'signed' && read.resultJson
        ? (JSON.parse(read.resultJson) as ReadWorkspace['result'])
        : resultOfVerdicts(effortRows, verdicts, protocol, session.ageYears);
    return {
      readId: read.id,
      blindCode: read.blindCode,
      kind: read.kind,
      status: read.status,
      version: read.version,
      dueAt: read.dueAt,
      visitCode: blinding.showVisit ? codes.visitCode : null,
      timepointCode: blinding.showTimepoint ? codes.timepointCode : null,
      bronchodilator: blinding.showBronchodilator ? session.bronchodilator : null,
      ageYears: session.ageYears,
      heightCm: session.heightCm,
      sex: session.sex,
      protocolRuleSet: protocolRuleSetOf(protocol),
      efforts: effortRows.map(toReadEffort),
      verdicts,
      feedbackText: read.feedbackText,
      result,
      signature: this.signatureOf(read.id) ?? null,
    };
  }

  /** The signature of a read as shown with it, checked against the read's current content. */
  signatureOf(readId: string): SignatureManifestation | undefined {
    const read = this.repository.findRead(readId);
    if (!read?.signatureId) return undefined;
    return this.signatures.manifestation(read.signatureId, this.signedContentOf(read));
  }

  /** Curves of the read's file, effort labels "Effort n" (file labels can carry identifiers). */
  async curves(principal: Principal, studyId: string, readId: string): Promise<SessionCurves> {
    const read = this.ownRead(principal, studyId, readId);
    let curves: SessionCurves;
    try {
      curves = await this.uploads.curves(read.studyId, read.sessionId, { allSites: true });
    } catch (error) {
      // The upload service's messages name the file, which readers must not see.
      if (!(error instanceof AppError)) throw error;
      this.logger.warn({ readId, code: error.code }, error.message);
      throw new AppError(error.status, error.code, 'The curves of this read cannot be drawn now; try again later or tell the data manager.');
    }
    return { efforts: curves.efforts.map((effort) => ({ ...effort, label: effortLabel(effort.index) })) };
  }

  /** Saves the whole draft; 409 'stale-read' naming what differs when the read was saved elsewhere meanwhile. */
  save(principal: Principal, studyId: string, readId: string, input: SaveRead): ReadWorkspace {
    const read = this.ownRead(principal, studyId, readId);
    this.audit.write(this.actorFor(principal, read), (record) => {
      const current = this.repository.findRead(readId)!;
      const session = this.sessions.findSessionById(current.sessionId)!;
      this.assertOpen(current);
      this.assertUnlocked(session);
      const stored = this.repository.verdictsOf(readId);
      const byIndex = new Map(stored.map((row) => [row.effortIndex, row]));
      assertVerdictsFit(input.verdicts, [...byIndex.keys()]);
      if (input.version !== current.version) throw staleRead(current, stored, input);

      const changed: { before: ReadVerdictRow; after: ReadVerdictRow }[] = [];
      for (const verdict of input.verdicts) {
        const before = byIndex.get(verdict.effortIndex)!;
        const after: ReadVerdictRow = {
          ...before,
          fev1Verdict: verdict.fev1Verdict,
          fvcVerdict: verdict.fvcVerdict,
          findingsJson: JSON.stringify(verdict.findings),
          comment: verdict.comment,
        };
        if (verdictDiffers(before, after)) changed.push({ before, after });
      }
      const feedbackChanged = input.feedbackText !== current.feedbackText;
      if (changed.length === 0 && !feedbackChanged) return;

      for (const { after } of changed) this.repository.updateVerdict(readId, after.effortIndex, after);
      const version = current.version + 1;
      this.updateAtVersion(current, { version, feedbackText: input.feedbackText, updatedAt: this.clock().toISOString() });
      record({
        studyId,
        siteId: session.siteId,
        entity: 'read',
        entityId: readId,
        action: 'save',
        oldValue: {
          version: current.version,
          verdicts: changed.map(({ before }) => auditVerdict(before)),
          ...(feedbackChanged ? { feedbackText: current.feedbackText } : {}),
        },
        newValue: {
          version,
          verdicts: changed.map(({ after }) => ({ ...auditVerdict(after), overridesEngine: overrideOf(after) ?? null })),
          ...(feedbackChanged ? { feedbackText: input.feedbackText } : {}),
        },
      });
    });
    return this.workspaceOf(this.repository.findRead(readId)!);
  }

  /** Gives the claim back: the read is withdrawn and the session returns to the queue. */
  release(principal: Principal, studyId: string, readId: string): void {
    const read = this.ownRead(principal, studyId, readId);
    this.audit.write(this.actorFor(principal, read), (record) => {
      const current = this.repository.findRead(readId)!;
      const session = this.sessions.findSessionById(current.sessionId)!;
      this.assertOpen(current);
      this.assertUnlocked(session);
      const now = this.clock().toISOString();
      this.updateAtVersion(current, { status: 'withdrawn', version: current.version + 1, updatedAt: now });
      record({
        studyId,
        siteId: session.siteId,
        entity: 'read',
        entityId: readId,
        action: 'release',
        oldValue: { status: current.status, version: current.version },
        newValue: { status: 'withdrawn', version: current.version + 1 },
      });
      const stillLive = liveOverReads(this.repository.readsOfSession(session.id));
      if (current.kind !== 'adjudication' && stillLive.length === 0 && session.status === 'in-reading') {
        this.sessions.updateSession(session.id, { status: 'checked', updatedAt: now });
        record({
          studyId,
          siteId: session.siteId,
          entity: 'session',
          entityId: session.id,
          action: 'return-to-queue',
          oldValue: { status: session.status },
          newValue: { status: 'checked', releasedReadId: readId },
        });
      }
    });
  }

  /**
   * Signs the read (meaning "authored") after checking the re-authentication, the version and
   * the lock; the signature is bound to the read's verdicts, feedback, result and file. A single
   * design's first read makes the session final; any other read goes to the comparison.
   */
  sign(principal: Principal, studyId: string, readId: string, input: { version: number; meaning: SignatureMeaning }): ReadWorkspace {
    const read = this.ownRead(principal, studyId, readId);
    const finalSessionId = this.audit.write(this.actorFor(principal, read), (record) => {
      const current = this.repository.findRead(readId)!;
      const session = this.sessions.findSessionById(current.sessionId)!;
      this.assertOpen(current);
      this.assertUnlocked(session);
      const stored = this.repository.verdictsOf(readId);
      if (input.version !== current.version) throw staleRead(current, stored);
      const effortRows = this.sessions.effortsOf(current.uploadId);
      const judged = new Set(stored.map((row) => row.effortIndex));
      const unjudged = effortRows.filter((effort) => !judged.has(effort.effortIndex));
      if (unjudged.length > 0) {
        throw AppError.conflict(
          `Give verdicts on ${unjudged.map((effort) => effortLabel(effort.effortIndex)).join(', ')} before signing; nothing was signed.`,
          { effortIndices: unjudged.map((effort) => effort.effortIndex) },
          'read-incomplete',
        );
      }
      const study = this.studies.findStudy(studyId)!;
      const result = resultOfVerdicts(effortRows, stored.map(toEffortVerdict), this.protocolOfStudy(study), session.ageYears);
      const upload = this.sessions.findUpload(current.uploadId)!;
      const content = signedReadContent({
        readId,
        verdicts: stored.map(toEffortVerdict),
        feedbackText: current.feedbackText,
        result,
        upload: { id: upload.id, sha256: upload.sha256 },
      });
      const signature = this.signatures.sign(principal, { meaning: input.meaning, recordType: 'read', recordId: readId, content });
      this.updateAtVersion(current, {
        status: 'signed',
        version: current.version + 1,
        signatureId: signature.id,
        signedAt: signature.signedAt,
        resultJson: JSON.stringify(result),
        updatedAt: signature.signedAt,
      });
      record({
        studyId,
        siteId: session.siteId,
        entity: 'read',
        entityId: readId,
        action: 'sign',
        oldValue: { status: current.status, version: current.version },
        newValue: {
          status: 'signed',
          version: current.version + 1,
          signatureId: signature.id,
          meaning: signature.meaning,
          signedAt: signature.signedAt,
          authTime: signature.authTime,
          contentHash: signature.contentHash,
          result: { fev1Grade: result.fev1Grade, fvcGrade: result.fvcGrade, reportedFev1L: result.reportedFev1L, reportedFvcL: result.reportedFvcL },
          overridesEngine: stored.map(overrideOf).filter((override) => override !== undefined),
        },
      });

      if (current.kind === 'first' && !session.dualRead) {
        this.finaliseSingleRead(record, session, readId, signature.signedAt);
      } else {
        this.hooks.finaliseAfterSignedRead?.(readId);
      }
      const after = this.sessions.findSessionById(session.id)!;
      return session.status !== 'final' && after.status === 'final' ? session.id : undefined;
    });
    if (finalSessionId) this.announceFinal(finalSessionId);
    return this.workspaceOf(this.repository.findRead(readId)!);
  }

  /**
   * Opens a read on a session's current file with the engine's suggestions pre-filled; call
   * inside audit.write. Used for claims from the queue and for adjudication reads.
   */
  startRead(record: RecordChange, input: { session: SessionRow; readerId: string; kind: ReadKind; dueAt: string }): ReadRow {
    const { session } = input;
    const now = this.clock().toISOString();
    const read: ReadRow = {
      id: randomUUID(),
      studyId: session.studyId,
      sessionId: session.id,
      uploadId: session.currentUploadId!,
      readerId: input.readerId,
      kind: input.kind,
      blindCode: this.newBlindCode(),
      status: 'in-progress',
      version: 1,
      claimedAt: now,
      dueAt: input.dueAt,
      updatedAt: now,
      selectionJson: '{}',
      feedbackText: '',
      resultJson: null,
      signatureId: null,
      signedAt: null,
    };
    this.repository.insertRead(read);
    this.repository.insertVerdicts(suggestedVerdictRows(read.id, this.sessions.effortsOf(read.uploadId)));
    record({
      studyId: session.studyId,
      siteId: session.siteId,
      entity: 'read',
      entityId: read.id,
      action: 'claim',
      newValue: { sessionId: session.id, kind: read.kind, blindCode: read.blindCode, uploadId: read.uploadId, dueAt: read.dueAt },
    });
    return read;
  }

  /** Refuses writes to a locked session; the message names the lock, never the session. */
  assertUnlocked(session: SessionRow): void {
    const lock = this.sessions.activeLockOn(session);
    if (!lock) return;
    throw AppError.conflict(
      `The data of this session is locked (${lock.scope} lock since ${lock.lockedAt}: ${lock.reason}); nothing was changed.`,
      { scope: lock.scope, reason: lock.reason, lockedAt: lock.lockedAt },
      'locked',
    );
  }

  protocolOfStudy(study: StudyRow): ResolvedProtocol {
    return this.protocolFor(study.protocolVersion ? `${study.protocolRuleSetId}@${study.protocolVersion}` : study.protocolRuleSetId);
  }

  private finaliseSingleRead(record: RecordChange, session: SessionRow, readId: string, at: string): void {
    this.sessions.updateSession(session.id, { status: 'final', feedbackReleasedAt: at, updatedAt: at });
    record({
      studyId: session.studyId,
      siteId: session.siteId,
      entity: 'session',
      entityId: session.id,
      action: 'finalise',
      oldValue: { status: session.status, feedbackReleasedAt: session.feedbackReleasedAt },
      newValue: { status: 'final', finalReadId: readId, feedbackReleasedAt: at },
    });
  }

  private announceFinal(sessionId: string): void {
    try {
      this.hooks.onFinal?.(sessionId);
    } catch (error) {
      // The signature is committed; a failed notice must not turn the answer into an error.
      this.logger.error({ err: error, sessionId }, 'the session is final but its feedback notice failed');
    }
  }

  /** The read if it is the caller's, in this study; 404 otherwise, without saying whose it is. */
  private ownRead(principal: Principal, studyId: string, readId: string): ReadRow {
    const read = this.repository.findRead(readId);
    if (!read || read.studyId !== studyId || read.readerId !== principal.user.id) {
      throw AppError.notFound('There is no such read among yours in this study.');
    }
    return read;
  }

  private actorFor(principal: Principal, read: ReadRow): AuditActor {
    return studyActor(principal, read.studyId, READER_ROLES[read.kind]);
  }

  private assertOpen(read: ReadRow): void {
    if (read.status === 'signed') {
      throw AppError.conflict(`Read ${read.blindCode} is signed and can no longer change.`, { status: read.status }, 'read-signed');
    }
    if (read.status === 'withdrawn') {
      throw AppError.conflict(`Read ${read.blindCode} was released; claim the session again from the queue.`, { status: read.status }, 'read-withdrawn');
    }
  }

  private updateAtVersion(read: ReadRow, changes: Partial<ReadRow>): void {
    // The transaction is immediate, so this only fails if the version check above was skipped.
    if (!this.repository.updateReadAtVersion(read.id, read.version, changes)) throw staleRead(read, this.repository.verdictsOf(read.id));
  }

  private signedContentOf(read: ReadRow): SignedReadContent {
    const upload = this.sessions.findUpload(read.uploadId);
    return signedReadContent({
      readId: read.id,
      verdicts: this.repository.verdictsOf(read.id).map(toEffortVerdict),
      feedbackText: read.feedbackText,
      result: read.resultJson === null ? null : (JSON.parse(read.resultJson) as unknown),
      upload: { id: read.uploadId, sha256: upload?.sha256 ?? '' },
    });
  }

  private newBlindCode(): string {
    for (;;) {
      const bytes = randomBytes(8);
      const letters = [...bytes].map((byte) => BLIND_CODE_ALPHABET[byte % BLIND_CODE_ALPHABET.length]).join('');
      const code = `R-${letters.slice(0, 4)}-${letters.slice(4)}`;
      if (!this.repository.findReadByBlindCode(code)) return code;
    }
  }
}
