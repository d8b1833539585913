import { createHash, randomUUID } from 'node:crypto';
import { performance } from 'node:perf_hooks';
import type { Logger } from 'pino';
import type { ReplayProblem, ReplayResult } from '../../shared/contracts/protocols.js';
import { SpirometryInputError } from '../../shared/spirometry/model.js';
import type { ResolvedProtocol } from '../../shared/spirometry/protocol.js';
import { analyzeSession } from '../../shared/spirometry/session-analysis.js';
import type { AuditActor, AuditTrail } from '../audit/audit-trail.js';
import type { AppConfig } from '../config.js';
import { AppError } from '../http/app-error.js';
import { ruleSetRefText, type ProtocolService, type RuleSetRef } from '../protocols/protocol-service.js';
import type { ObjectStorage } from '../storage/object-storage.js';
import type { StudyRepository } from '../studies/study-repository.js';
import { decodeSessionFile, type DecodedSessionFile } from '../uploads/session-file-decoder.js';
import { replayCsv, replayCsvFileName } from './replay-csv.js';
import { diffReplay, outcomeOf, type ReplayedSession, type SessionCodes, type SessionOutcome } from './replay-diff.js';
import type { ReplayRepository, ReplaySessionRow } from './replay-repository.js';

/**
 * Replays kept for download, newest last. They live in this process's memory only: a restart
 * forgets them, and the audit trail keeps who ran which replay with its counts.
 */
export const KEPT_REPLAYS = 5;

/**
 * "What if this study used another rule set?": every checked session's stored original is read
 * back (checked against its SHA-256), analysed by today's engine under the study's own rule set
 * and under the target, and the differences listed. Nothing is written to sessions, efforts or
 * reads; the replay itself is an action someone took, so it is audited.
 */
export class ReplayService {
  private readonly kept = new Map<string, ReplayResult>();

  constructor(
    private readonly replays: ReplayRepository,
    private readonly studies: StudyRepository,
    private readonly protocols: ProtocolService,
    private readonly audit: AuditTrail,
    private readonly storage: ObjectStorage,
    private readonly limits: AppConfig['uploads'],
    private readonly clock: () => Date,
    private readonly logger: Logger,
  ) {}

  /** Runs a replay of the study under `target`; 404 naming the known rule sets when it does not exist. */
  async replay(actor: AuditActor, studyId: string, target: RuleSetRef): Promise<ReplayResult> {
    const started = performance.now();
    const study = this.studies.findStudy(studyId);
    if (!study) throw AppError.notFound(`There is no study ${studyId}.`);
    const targetProtocol = this.protocols.resolve(target);
    const currentProtocol = this.protocols.resolveForStudy(study);

    const storedByUpload = groupStoredEfforts(this.replays.storedEffortsOf(studyId));
    const replayed: ReplayedSession[] = [];
    const problems: ReplayProblem[] = [];
    for (const row of this.replays.checkedSessionsOf(studyId)) {
      const codes = codesOf(row);
      const bytes = await this.storage.get(row.objectKey);
      const sha256 = createHash('sha256').update(bytes).digest('hex');
      if (sha256 !== row.sha256) {
        this.logger.error({ uploadId: row.uploadId, expected: row.sha256, found: sha256 }, 'stored file does not match its checksum');
        problems.push({ ...codes, where: 'stored-file', message: `the stored copy of ${row.originalName} does not match its SHA-256; it was not used` });
        continue;
      }
      const current = this.analyse(row, bytes, currentProtocol);
      const targetOutcome = this.analyse(row, bytes, targetProtocol);
      if (typeof current === 'string') problems.push({ ...codes, where: 'current', message: current });
      if (typeof targetOutcome === 'string') problems.push({ ...codes, where: 'target', message: targetOutcome });
      if (typeof current === 'string' || typeof targetOutcome === 'string') continue;
      replayed.push({
        codes,
        current,
        target: targetOutcome,
        stored: { efforts: storedByUpload.get(row.uploadId) ?? [], fev1Grade: row.fev1Grade, fvcGrade: row.fvcGrade },
      });
    }

    const differences = diffReplay(replayed, problems);
    const result: ReplayResult = {
      id: randomUUID(),
      studyId,
      ranAt: this.clock().toISOString(),
      ranBy: actor.userId,
      current: { ref: ruleSetRefText(currentProtocol), title: currentProtocol.title },
      target: { ref: ruleSetRefText(targetProtocol), title: targetProtocol.title },
      ...differences,
      problems,
      elapsedMs: Math.round(performance.now() - started),
    };
    this.audit.write(actor, (record) =>
      record({
        studyId,
        entity: 'study',
        entityId: studyId,
        action: 'replay',
        newValue: { replayId: result.id, current: result.current.ref, target: result.target.ref, counts: result.counts },
      }),
    );
    this.keep(result);
    return result;
  }

  /** A replay kept in memory; 404 once it has been pushed out or the server restarted. */
  find(studyId: string, replayId: string): ReplayResult {
    const result = this.kept.get(replayId);
    if (!result || result.studyId !== studyId) {
      throw AppError.notFound(
        `Replay ${replayId} is not kept any more: the last ${KEPT_REPLAYS} replays are kept until the server restarts. Run it again.`,
      );
    }
    return result;
  }

  /** The change list of a kept replay as a CSV file. */
  csv(studyId: string, replayId: string): { fileName: string; text: string } {
    const result = this.find(studyId, replayId);
    return { fileName: replayCsvFileName(result), text: replayCsv(result) };
  }

  /** The session analysed under one rule set, or the reason it cannot be (in the engine's words). */
  private analyse(row: ReplaySessionRow, bytes: Buffer, protocol: ResolvedProtocol): SessionOutcome | string {
    try {
      const decoded: DecodedSessionFile = decodeSessionFile(row.originalName, bytes, {
        maxExpandedBytes: this.limits.maxExpandedBytes,
        maxEntries: this.limits.maxZipEntries,
        maxCompressionRatio: this.limits.maxCompressionRatio,
        // A rule set may ask for a higher sampling rate than the one the file passed at upload.
        minSampleRateHz: protocol.engine.minSampleRateHz,
      });
      return outcomeOf(analyzeSession(decoded.recordings, protocol, { demographics: { ageYears: row.ageYears } }));
    } catch (error) {
      // A file the engine refuses under this rule set is a finding of the replay, not a failure of it.
      if (error instanceof SpirometryInputError) return error.message;
      throw error;
    }
  }

  private keep(result: ReplayResult): void {
    this.kept.set(result.id, result);
    while (this.kept.size > KEPT_REPLAYS) this.kept.delete(this.kept.keys().next().value!);
  }
}

function codesOf(row: ReplaySessionRow): SessionCodes {
  return {
    sessionId: row.sessionId,
    siteNumber: row.siteNumber,
    subjectCode: row.subjectCode,
    visitCode: row.visitCode,
    timepointCode: row.timepointCode,
    bronchodilator: row.bronchodilator,
  };
}

function groupStoredEfforts(rows: ReturnType<ReplayRepository['storedEffortsOf']>) {
  const byUpload = new Map<string, { index: number; fev1: string; fvc: string }[]>();
  for (const row of rows) {
    const list = byUpload.get(row.uploadId) ?? [];
    list.push({ index: row.effortIndex, fev1: row.suggestedFev1Verdict, fvc: row.suggestedFvcVerdict });
    byUpload.set(row.uploadId, list);
  }
  return byUpload;
}
