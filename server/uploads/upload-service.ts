import { createHash, randomUUID } from 'node:crypto';
import type { Logger } from 'pino';
import type { SessionCurves, UploadResult } from '../../shared/contracts/sessions.js';
import { checkCalibration } from '../../shared/spirometry/interpretation/calibration-check.js';
import type { ResolvedProtocol } from '../../shared/spirometry/protocol.js';
import { analyzeSession } from '../../shared/spirometry/session-analysis.js';
import { SYSTEM_ACTOR, type AuditActor, type AuditTrail, type RecordChange } from '../audit/audit-trail.js';
import type { CalibrationRepository } from '../calibration/calibration-repository.js';
import type { AppConfig } from '../config.js';
import { AppError } from '../http/app-error.js';
import type { SiteScope } from '../http/access.js';
import type { MessageService, PendingMessage } from '../messages/message-service.js';
import type { SessionRepository, SessionRow, UploadRow } from '../sessions/session-repository.js';
import type { SessionService } from '../sessions/session-service.js';
import { describeSession, toUpload } from '../sessions/session-views.js';
import type { ObjectStorage } from '../storage/object-storage.js';
import type { StudyRepository } from '../studies/study-repository.js';
import { checkSessionFile, verdictReasons, type FileCheckOutcome, type RegisteredSession } from './file-check.js';
import { decodeSessionFile } from './session-file-decoder.js';

/** A received file before anything is parsed. */
export interface ReceivedFile {
  readonly originalName: string;
  readonly contentType: string;
  readonly bytes: Buffer;
}

/** Points where a crash test can stop the process; never set in production. */
export interface UploadFaultHooks {
  readonly afterObjectStored?: (originalName: string) => void;
}

/** Where uploads live in the bucket: one object per received file, named by its upload id. */
export const UPLOAD_KEY_PREFIX = 'uploads/';

/** Statuses in which a session takes a (new) file. */
const ACCEPTS_FILE = new Set(['awaiting-file', 'rejected']);

/** How many sessions' curves stay computed in memory; the stored original never changes, so they never go stale. */
const CURVE_CACHE_SIZE = 64;

/**
 * The upload pipeline: store the original bytes with their SHA-256 first, then parse and run the
 * engine outside any transaction, then write the upload, its efforts, the session's new status and
 * the audit rows in one transaction. A crash between the stored object and the commit leaves an
 * object no row points to; {@link sweepOrphans} finds and applies it at the next start.
 */
export class UploadService {
  private readonly curveCache = new Map<string, SessionCurves>();

  constructor(
    private readonly sessions: SessionRepository,
    private readonly sessionService: SessionService,
    private readonly studies: StudyRepository,
    private readonly calibration: CalibrationRepository,
    private readonly audit: AuditTrail,
    private readonly storage: ObjectStorage,
    private readonly messages: MessageService,
    private readonly protocolFor: (ruleSetId: string) => ResolvedProtocol,
    private readonly limits: AppConfig['uploads'],
    private readonly clock: () => Date,
    private readonly logger: Logger,
    private readonly faults: UploadFaultHooks = {},
  ) {}

  /** Receives a session's file; answers with the checked session, or 422 listing why the stored file cannot be used. */
  async receive(actor: AuditActor, studyId: string, sessionId: string, scope: SiteScope, file: ReceivedFile): Promise<UploadResult> {
    const session = this.sessionService.requireSession(studyId, sessionId, scope);
    this.assertAcceptsFile(session);
    const sha256 = createHash('sha256').update(file.bytes).digest('hex');
    this.assertNotDuplicate(studyId, sha256, scope);

    const uploadId = randomUUID();
    const objectKey = `${UPLOAD_KEY_PREFIX}${uploadId}`;
    const receivedAt = this.clock().toISOString();
    await this.storage.put(objectKey, file.bytes, file.contentType || 'application/octet-stream', {
      'upload-id': uploadId,
      'study-id': studyId,
      'session-id': sessionId,
      'uploaded-by': actor.userId,
      'uploaded-role': actor.role,
      sha256,
      'original-name': encodeURIComponent(file.originalName),
      'received-at': receivedAt,
    });

    this.faults.afterObjectStored?.(file.originalName);

    let upload: UploadRow;
    try {
      upload = this.apply(actor, session, {
        uploadId,
        objectKey,
        sha256,
        receivedAt,
        originalName: file.originalName,
        contentType: file.contentType,
        bytes: file.bytes,
        uploadedBy: actor.userId,
      });
    } catch (error) {
      // The object is not referenced by any row: remove it so that a refused file leaves nothing behind.
      if (error instanceof AppError) await this.storage.delete(objectKey).catch(() => undefined);
      throw error;
    }
    return this.answer(upload);
  }

  /** Runs the check again on a stored rejected file (after a correction or a new engine version). */
  async reprocess(actor: AuditActor, studyId: string, sessionId: string, uploadId: string, scope: SiteScope): Promise<UploadResult> {
    const session = this.sessionService.requireSession(studyId, sessionId, scope);
    this.sessionService.assertWritable(session);
    const upload = this.sessions.findUpload(uploadId);
    if (!upload || upload.sessionId !== sessionId) throw AppError.notFound('There is no such file in this session.');
    if (upload.outcome !== 'rejected') {
      throw AppError.conflict('This file was already checked; only a rejected file can be processed again.', undefined, 'upload-checked');
    }
    this.assertAcceptsFile(session);
    const bytes = await this.readVerified(upload);
    const outcome = this.runCheck(session, upload.originalName, bytes);
    const updated = this.audit.write(actor, (record) => {
      const current = this.sessions.findSessionById(sessionId)!;
      this.assertAcceptsFile(current);
      const processedAt = this.clock().toISOString();
      const changes = {
        outcome: outcome.outcome,
        detectedFormat: outcome.format,
        errors: JSON.stringify(outcome.outcome === 'rejected' ? outcome.reasons : []),
        processedAt,
      };
      this.sessions.updateUpload(upload.id, changes);
      record({
        studyId,
        siteId: session.siteId,
        entity: 'upload',
        entityId: upload.id,
        action: 'reprocess',
        oldValue: { outcome: upload.outcome, errors: JSON.parse(upload.errors) as string[] },
        newValue: { outcome: outcome.outcome, errors: outcome.outcome === 'rejected' ? outcome.reasons : [] },
      });
      this.applyOutcome(record, current, { ...upload, ...changes }, outcome);
      const row = { ...upload, ...changes };
      return { row, receipt: this.enqueueReceipt(actor.userId, session, row) };
    });
    if (updated.receipt) this.messages.deliver(updated.receipt);
    return this.answer(updated.row);
  }

  /** Plot series of the current file's efforts, computed from the stored original. */
  async curves(studyId: string, sessionId: string, scope: SiteScope): Promise<SessionCurves> {
    const session = this.sessionService.requireSession(studyId, sessionId, scope);
    if (!session.currentUploadId) throw AppError.notFound('This session has no checked file yet, so there are no curves.');
    const cached = this.curveCache.get(session.currentUploadId);
    if (cached) return cached;
    const upload = this.sessions.findUpload(session.currentUploadId)!;
    const bytes = await this.readVerified(upload);
    const protocol = this.protocolOfStudy(studyId);
    const decoded = decodeSessionFile(upload.originalName, bytes, { ...this.decodeLimits(), minSampleRateHz: protocol.engine.minSampleRateHz });
    const analysis = analyzeSession(decoded.recordings, protocol, { demographics: { ageYears: session.ageYears }, plots: true });
    const curves: SessionCurves = {
      efforts: analysis.efforts.map((effort) => ({
        index: effort.index,
        label: effort.label,
        timeS: effort.plot!.timeS,
        volumeL: effort.plot!.volumeL,
        flowLPerS: effort.plot!.flowLPerS,
        backExtrapolation: { timeS: [...effort.plot!.backExtrapolation.timeS], volumeL: [...effort.plot!.backExtrapolation.volumeL] },
      })),
    };
    this.curveCache.set(upload.id, curves);
    if (this.curveCache.size > CURVE_CACHE_SIZE) this.curveCache.delete(this.curveCache.keys().next().value!);
    return curves;
  }

  /** The stored original, checked against its SHA-256 before it leaves the server. */
  async original(studyId: string, sessionId: string, uploadId: string, scope: SiteScope): Promise<{ upload: UploadRow; bytes: Buffer }> {
    this.sessionService.requireSession(studyId, sessionId, scope);
    const upload = this.sessions.findUpload(uploadId);
    if (!upload || upload.sessionId !== sessionId) throw AppError.notFound('There is no such file in this session.');
    return { upload, bytes: await this.readVerified(upload) };
  }

  /**
   * Start-up reconciliation: an object in storage that no upload row names was stored by a
   * request that never committed. It is applied now as if the request had finished (its
   * metadata says who sent it for which session), or recorded as rejected when the session no
   * longer takes a file, or removed when the same bytes are already stored.
   */
  async sweepOrphans(): Promise<{ applied: number; discarded: number; kept: number }> {
    const known = this.sessions.allObjectKeys();
    const tally = { applied: 0, discarded: 0, kept: 0 };
    for await (const key of this.storage.keys(UPLOAD_KEY_PREFIX)) {
      if (known.has(key)) continue;
      const metadata = await this.storage.metadata(key);
      const session = metadata?.['session-id'] ? this.sessions.findSessionById(metadata['session-id']) : undefined;
      if (!metadata || !session) {
        this.logger.warn({ key }, 'stored object without a session left in place for manual review');
        tally.kept++;
        continue;
      }
      const bytes = await this.storage.get(key);
      const sha256 = createHash('sha256').update(bytes).digest('hex');
      if (sha256 !== metadata['sha256'] || this.sessions.findUploadBySha256(session.studyId, sha256)) {
        await this.storage.delete(key);
        this.audit.write(SYSTEM_ACTOR, (record) =>
          record({
            studyId: session.studyId,
            siteId: session.siteId,
            entity: 'upload',
            entityId: metadata['upload-id'] ?? key,
            action: 'discard-interrupted',
            newValue: { objectKey: key, sha256, reason: sha256 !== metadata['sha256'] ? 'incomplete object' : 'same file already stored' },
          }),
        );
        tally.discarded++;
        continue;
      }
      const actor: AuditActor = { userId: metadata['uploaded-by'] ?? SYSTEM_ACTOR.userId, role: SYSTEM_ACTOR.role };
      const upload = this.apply(
        actor,
        session,
        {
          uploadId: metadata['upload-id'] ?? randomUUID(),
          objectKey: key,
          sha256,
          receivedAt: metadata['received-at'] ?? this.clock().toISOString(),
          originalName: decodeURIComponent(metadata['original-name'] ?? 'recovered-file'),
          contentType: 'application/octet-stream',
          bytes,
          uploadedBy: metadata['uploaded-by'] ?? session.registeredBy,
        },
        { recovered: true },
      );
      this.logger.info({ key, uploadId: upload.id, outcome: upload.outcome }, 'applied an upload interrupted before its commit');
      tally.applied++;
    }
    return tally;
  }

  private apply(
    actor: AuditActor,
    session: SessionRow,
    file: {
      uploadId: string;
      objectKey: string;
      sha256: string;
      receivedAt: string;
      originalName: string;
      contentType: string;
      bytes: Buffer;
      uploadedBy: string;
    },
    options: { recovered?: boolean } = {},
  ): UploadRow {
    const outcome = this.runCheck(session, file.originalName, file.bytes);
    const upload = this.audit.write(actor, (record) => {
      const current = this.sessions.findSessionById(session.id)!;
      let finalOutcome = outcome;
      if (options.recovered) {
        const problem = this.lockProblem(current) ?? (ACCEPTS_FILE.has(current.status) ? undefined : `the session already had a file (${current.status})`);
        if (problem) finalOutcome = { outcome: 'rejected', format: outcome.format, reasons: [`recovered after an interrupted upload; not applied: ${problem}`] };
      } else {
        this.sessionService.assertWritable(current);
        this.assertAcceptsFile(current);
      }
      const row: UploadRow = {
        id: file.uploadId,
        studyId: session.studyId,
        sessionId: session.id,
        objectKey: file.objectKey,
        sha256: file.sha256,
        sizeBytes: file.bytes.length,
        originalName: file.originalName,
        contentType: file.contentType || 'application/octet-stream',
        detectedFormat: finalOutcome.format,
        uploadedBy: file.uploadedBy,
        receivedAt: file.receivedAt,
        outcome: finalOutcome.outcome,
        errors: JSON.stringify(finalOutcome.outcome === 'rejected' ? finalOutcome.reasons : []),
        processedAt: this.clock().toISOString(),
      };
      try {
        this.sessions.insertUpload(row);
      } catch (error) {
        if ((error as { code?: string }).code === 'SQLITE_CONSTRAINT_UNIQUE') this.assertNotDuplicate(session.studyId, file.sha256, { allSites: true });
        throw error;
      }
      record({
        studyId: session.studyId,
        siteId: session.siteId,
        entity: 'upload',
        entityId: row.id,
        action: options.recovered ? 'receive-recovered' : 'receive',
        newValue: {
          originalName: row.originalName,
          sizeBytes: row.sizeBytes,
          sha256: row.sha256,
          objectKey: row.objectKey,
          detectedFormat: row.detectedFormat,
        },
      });
      if (!(options.recovered && finalOutcome !== outcome)) this.applyOutcome(record, current, row, finalOutcome);
      return { row, receipt: this.enqueueReceipt(file.uploadedBy, session, row) };
    });
    if (upload.receipt) this.messages.deliver(upload.receipt);
    return upload.row;
  }

  /** Writes what the check found: efforts and the checked status, or the rejection with its reasons. */
  private applyOutcome(record: RecordChange, session: SessionRow, upload: UploadRow, outcome: FileCheckOutcome): void {
    const now = this.clock().toISOString();
    const before = { status: session.status, currentUploadId: session.currentUploadId };
    if (outcome.outcome === 'rejected') {
      this.sessions.updateSession(session.id, {
        status: 'rejected',
        rejectionReasons: JSON.stringify(outcome.reasons),
        updatedAt: now,
      });
      record({
        studyId: session.studyId,
        siteId: session.siteId,
        entity: 'session',
        entityId: session.id,
        action: 'reject-file',
        oldValue: before,
        newValue: { status: 'rejected', uploadId: upload.id, reasons: outcome.reasons },
      });
      return;
    }
    const { analysis, decoded, check } = outcome;
    this.sessions.insertEfforts(
      analysis.efforts.map((effort) => ({
        id: `${upload.id}:${effort.index}`,
        sessionId: session.id,
        uploadId: upload.id,
        effortIndex: effort.index,
        label: effort.label,
        signal: decoded.recordings[effort.index].signal,
        sampleRateHz: decoded.recordings[effort.index].sampleRateHz,
        sampleCount: decoded.recordings[effort.index].values.length,
        fev1L: effort.metrics.fev1L,
        fvcL: effort.metrics.fvcL,
        pefLPerS: effort.metrics.pefLPerS,
        suggestedFev1Verdict: effort.verdicts.fev1.verdict,
        suggestedFvcVerdict: effort.verdicts.fvc.verdict,
        metricsJson: JSON.stringify(effort.metrics),
        findingsJson: JSON.stringify(effort.findings),
        verdictReasonsJson: JSON.stringify(verdictReasons(effort)),
      })),
    );
    for (const reading of decoded.calibrationChecks) {
      const result = checkCalibration(reading.measuredVolumeL, { syringeVolumeL: reading.syringeVolumeL });
      this.calibration.insert({
        id: randomUUID(),
        studyId: session.studyId,
        siteId: session.siteId,
        deviceSerialNumber: decoded.metadata.device?.serialNumber ?? session.deviceSerialNumber ?? 'unknown',
        syringeVolumeL: reading.syringeVolumeL,
        measuredVolumeL: reading.measuredVolumeL,
        checkedAt: new Date(reading.checkedAt).toISOString(),
        errorPercent: result.errorPercent,
        withinTolerance: result.passed,
        source: 'upload',
        uploadId: upload.id,
        enteredBy: upload.uploadedBy,
        enteredAt: now,
      });
    }
    this.sessions.updateSession(session.id, {
      status: 'checked',
      rejectionReasons: '[]',
      checkJson: JSON.stringify(check),
      fev1Grade: check.fev1Grade,
      fvcGrade: check.fvcGrade,
      currentUploadId: upload.id,
      updatedAt: now,
    });
    record({
      studyId: session.studyId,
      siteId: session.siteId,
      entity: 'session',
      entityId: session.id,
      action: 'check-file',
      oldValue: before,
      newValue: {
        status: 'checked',
        uploadId: upload.id,
        efforts: analysis.efforts.length,
        fev1Grade: check.fev1Grade,
        fvcGrade: check.fvcGrade,
        calibrationChecks: decoded.calibrationChecks.length,
      },
    });
  }

  private runCheck(session: SessionRow, fileName: string, bytes: Uint8Array): FileCheckOutcome {
    const codes = this.sessions.sessionWithCodes(session.id)!;
    const registered: RegisteredSession = {
      subjectCode: codes.subjectCode,
      visitCode: codes.visitCode,
      timepointCode: codes.timepointCode,
      bronchodilator: session.bronchodilator,
      ageYears: session.ageYears,
    };
    const protocol = this.protocolOfStudy(session.studyId);
    return checkSessionFile(fileName, bytes, registered, protocol, this.decodeLimits());
  }

  /** The study's rule set at its pinned version, or the latest version when none is pinned. */
  private protocolOfStudy(studyId: string): ResolvedProtocol {
    const study = this.studies.findStudy(studyId)!;
    return this.protocolFor(study.protocolVersion ? `${study.protocolRuleSetId}@${study.protocolVersion}` : study.protocolRuleSetId);
  }

  private decodeLimits() {
    return {
      maxExpandedBytes: this.limits.maxExpandedBytes,
      maxEntries: this.limits.maxZipEntries,
      maxCompressionRatio: this.limits.maxCompressionRatio,
    };
  }

  private answer(upload: UploadRow): UploadResult {
    const session = this.sessionService.detailOf(upload.sessionId);
    if (upload.outcome === 'rejected') {
      const reasons = JSON.parse(upload.errors) as string[];
      throw new AppError(
        422,
        'file-rejected',
        `The file was stored but cannot be used: ${reasons.join('; ')}`,
        { uploadId: upload.id, sessionId: upload.sessionId, reasons },
      );
    }
    return { upload: toUpload(upload), session };
  }

  private async readVerified(upload: UploadRow): Promise<Buffer> {
    const bytes = await this.storage.get(upload.objectKey);
    const sha256 = createHash('sha256').update(bytes).digest('hex');
    if (sha256 !== upload.sha256) {
      this.logger.error({ uploadId: upload.id, expected: upload.sha256, found: sha256 }, 'stored file does not match its checksum');
      throw new AppError(500, 'storage-integrity', `The stored copy of ${upload.originalName} does not match its SHA-256; it was not used.`);
    }
    return bytes;
  }

  private assertAcceptsFile(session: SessionRow): void {
    this.sessionService.assertWritable(session);
    if (!ACCEPTS_FILE.has(session.status)) {
      throw AppError.conflict(
        `This session already has a checked file; a new file is taken only while a session awaits its file or after a rejection.`,
        { sessionId: session.id, status: session.status },
        'session-has-file',
      );
    }
  }

  private lockProblem(session: SessionRow): string | undefined {
    try {
      this.sessionService.assertWritable(session);
      return undefined;
    } catch (error) {
      return (error as Error).message;
    }
  }

  private assertNotDuplicate(studyId: string, sha256: string, scope: SiteScope): void {
    const existing = this.sessions.findUploadBySha256(studyId, sha256);
    if (!existing) return;
    const owner = this.sessions.sessionWithCodes(existing.sessionId)!;
    const visible = scope.allSites || scope.siteIds.includes(owner.session.siteId);
    const where = visible
      ? `${describeSession(owner)} (session ${owner.session.id}), received ${existing.receivedAt}`
      : 'a session of this study at a site outside your assignment';
    throw AppError.conflict(
      `This exact file (SHA-256 ${sha256.slice(0, 12)}…) was already uploaded for ${where}; nothing was stored again.`,
      visible ? { sessionId: owner.session.id, uploadId: existing.id } : undefined,
      'duplicate-file',
    );
  }

  /** The receipt e-mail, written in the upload's own transaction and sent after it commits. */
  private enqueueReceipt(userId: string, session: SessionRow, upload: UploadRow): PendingMessage | undefined {
    const codes = this.sessions.sessionWithCodes(session.id);
    const what = codes ? describeSession(codes) : `session ${session.id}`;
    const reasons = JSON.parse(upload.errors) as string[];
    const status =
      upload.outcome === 'checked'
        ? 'passed the automated checks and is queued for the over-read.'
        : `could not be used. It is kept, and can be processed again after a fix. Reasons:\n- ${reasons.join('\n- ')}`;
    return this.messages.enqueue(userId, {
      subject: `Tidemark receipt: ${upload.originalName} ${upload.outcome === 'checked' ? 'checked' : 'rejected'}`,
      body:
        `Tidemark received ${upload.originalName} (${upload.sizeBytes} bytes, SHA-256 ${upload.sha256}) at ${upload.receivedAt} UTC ` +
        `for ${what}.\n\nThe file ${status}\n\nAutomated checks support, and do not replace, review by qualified staff.`,
      link: `/site-desk/sessions/${session.studyId}/${session.id}`,
    });
  }
}
