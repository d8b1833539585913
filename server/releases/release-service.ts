/**
 * Locked dataset releases. A data manager asks for a release of the study (or part of it); only
 * locked sessions with final reads may be released, else the request is refused naming them. The
 * request is signed (meaning "released") over the release order — scope, data cut and a
 * fingerprint of the locked data — and audited; the files are then built as a background job
 * (progress polled), stored with their SHA-256 in a manifest, the completion audited with the
 * manifest's own SHA-256, and the data manager e-mailed. Reading a release verifies it: the
 * manifest against the audit trail and the signature, every file against the manifest.
 */
import { randomUUID } from 'node:crypto';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { Readable } from 'node:stream';
import type { Logger } from 'pino';
import { readResultSchema } from '../../shared/contracts/reading.js';
import {
  MANIFEST_FORMAT,
  type ManifestFile,
  type ReleaseManifest,
  type ReleaseOrder,
  type ReleaseProgress,
  type ReleaseRequest,
  type ReleaseScope,
  type ReleaseStatus,
  type ReleaseSummary,
  type ReleaseVerification,
} from '../../shared/contracts/releases.js';
import type { AuditActor, AuditTrail } from '../audit/audit-trail.js';
import type { Principal } from '../auth/principal.js';
import { AppError } from '../http/app-error.js';
import type { MessageService, PendingMessage } from '../messages/message-service.js';
import type { SignatureService } from '../signatures/signature-service.js';
import {
  contentTypeOf,
  isReleaseFileName,
  TABLE_PHASES,
  tableFilesIn,
  writeTables,
  writeTransportAndDefine,
  type BuiltFile,
} from './release-builder.js';
import { manifestText, parseManifest, RELEASE_CAUTION, sha256Hex, verifyRelease } from './manifest.js';
import type { ReleaseRepository, ReleaseStudyRow } from './release-repository.js';
import {
  blockersMessage,
  dataAsOf,
  dataFingerprint,
  finalReadOf,
  releaseBlockers,
  sessionsInScope,
  type LockHead,
  type SessionHead,
  type SignedReadHead,
} from './release-scope.js';
import { ReleaseDataChanged, releaseSource, type ReleasePlan } from './release-source.js';
import { releaseKey, type ReleaseStore } from './release-store.js';
import { startWorkbook, type WorkbookJob } from './release-xlsx-worker.js';
import { RE_DERIVED_RECORDS_PER_SESSION } from './sdtm-re.js';

/** Share of the progress bar for building the files; storing them and the manifest take the rest. */
const BUILD_SHARE = 90;
/**
 * Rough shares of the build's time on the progress bar (measured on the benchmark's release): the
 * two passes over the sessions for the CSV files, the transport file, and the workbook (which runs
 * beside them, on its own thread, and ends last).
 */
const STEP_WEIGHTS = { sessionTables: 1, effortTables: 4, transport: 1, workbook: 5 } as const;
type BuildStep = keyof typeof STEP_WEIGHTS;
const MANIFEST_FILE = 'manifest.json';
/** Final reads whose stored results are checked at a time when a release is ordered. */
const RESULT_CHECK_BATCH = 200;

/** The locked data of a scope when a release is asked for. */
interface Snapshot {
  readonly sessions: SessionHead[];
  readonly locks: LockHead[];
  readonly finalReads: Map<string, SignedReadHead>;
}

/** A release job while it runs and after, until the server restarts. */
interface Job {
  readonly releaseId: string;
  readonly studyId: string;
  readonly sessionCount: number;
  readonly startedAt: Date;
  status: 'running' | 'complete' | 'failed';
  phase: string;
  percent: number;
  finishedAt: Date | null;
  error: string | null;
  done: Promise<void>;
}

/**
 * The data fingerprint of a snapshot every session of which has its final read (no blockers): what
 * {@link ReleaseService.fingerprintNow} gives at that moment, without reading the data again.
 */
function snapshotFingerprint(snapshot: Snapshot, scope: ReleaseScope): string {
  const byId = [...snapshot.sessions].sort((a, b) => (a.id < b.id ? -1 : a.id > b.id ? 1 : 0));
  return dataFingerprint(
    byId.map((session) => ({
      sessionId: session.id,
      updatedAt: session.updatedAt,
      status: session.status,
      siteId: session.siteId,
      visitCode: session.visitCode,
      read: snapshot.finalReads.get(session.id) ?? null,
    })),
    scope,
  );
}

export class ReleaseService {
  private readonly jobs = new Map<string, Job>();

  constructor(
    private readonly repository: ReleaseRepository,
    private readonly store: ReleaseStore,
    private readonly signatures: SignatureService,
    private readonly audit: AuditTrail,
    private readonly messages: MessageService,
    private readonly clock: () => Date,
    private readonly logger: Logger,
  ) {}

  /**
   * Checks that every session in scope is locked and read, signs and audits the release order,
   * and starts building the files. 409 `not-locked` names the sessions in the way.
   */
  request(principal: Principal, actor: AuditActor, studyId: string, request: ReleaseRequest): { release: ReleaseSummary; progress: ReleaseProgress } {
    const study = this.requireStudy(studyId);
    const running = [...this.jobs.values()].find((job) => job.studyId === studyId && job.status === 'running');
    if (running) {
      throw AppError.conflict(
        `Release ${running.releaseId} of this study is still being built (${Math.round(running.percent)} %); wait for it to finish before asking for another.`,
        { releaseId: running.releaseId },
        'release-running',
      );
    }
    const scope: ReleaseScope = { siteIds: request.scope?.siteIds ?? null, visitCodes: request.scope?.visitCodes ?? null };
    const snapshot = this.snapshot(studyId, scope);
    if (snapshot.sessions.length === 0) {
      throw AppError.conflict('There are no sessions in this scope: nothing to release.', { scope }, 'nothing-to-release');
    }
    const blockers = releaseBlockers(snapshot.sessions, snapshot.locks, snapshot.finalReads);
    if (blockers.length > 0) {
      throw AppError.conflict(
        blockersMessage(blockers),
        {
          notLocked: blockers.filter((blocker) => blocker.problem === 'not-locked').length,
          noFinalRead: blockers.filter((blocker) => blocker.problem === 'no-final-read').length,
          sessions: blockers.slice(0, 20).map(({ session, problem }) => ({
            sessionId: session.id,
            subjectCode: session.subjectCode,
            visitCode: session.visitCode,
            timepointCode: session.timepointCode,
            bronchodilator: session.bronchodilator,
            problem,
          })),
        },
        'not-locked',
      );
    }
    const releaseId = randomUUID();
    const order: ReleaseOrder = {
      releaseId,
      studyId,
      studyCode: study.code,
      scope,
      reason: request.reason || null,
      dataCutAt: this.clock().toISOString(),
      dataFingerprint: snapshotFingerprint(snapshot, scope),
      sessionCount: snapshot.sessions.length,
      requestedBy: { userId: principal.user.id, printedName: principal.user.name },
    };
    const signature = this.audit.write(actor, (record) => {
      const signed = this.signatures.sign(principal, { meaning: 'released', recordType: 'release', recordId: releaseId, content: order });
      record({ studyId, entity: 'release', entityId: releaseId, action: 'request', newValue: { order, signatureId: signed.id }, reason: order.reason });
      return signed;
    });
    const job: Job = {
      releaseId,
      studyId,
      sessionCount: order.sessionCount,
      startedAt: this.clock(),
      status: 'running',
      phase: 'Starting',
      percent: 0,
      finishedAt: null,
      error: null,
      done: Promise.resolve(),
    };
    this.jobs.set(releaseId, job);
    const manifestSignature = { signatureId: signature.id, printedName: signature.printedName, meaning: 'released' as const, signedAt: signature.signedAt };
    // Only ids are kept while the files are written; the rest is read again a batch at a time.
    const plan: ReleasePlan = {
      sessions: snapshot.sessions.map((session) => ({ sessionId: session.id, readId: snapshot.finalReads.get(session.id)!.id })),
      locks: snapshot.locks,
      dataAsOf: dataAsOf(snapshot.sessions, snapshot.finalReads),
      effortCount: this.repository.effortCount([...snapshot.finalReads.values()].map((read) => read.uploadId)),
    };
    job.done = this.run(job, actor, study, order, manifestSignature, plan);
    return { release: this.summary(studyId, releaseId), progress: this.progress(studyId, releaseId) };
  }

  /** Resolves when the release's job has ended (completed or failed); for tests and the benchmark. */
  async settled(releaseId: string): Promise<void> {
    await this.jobs.get(releaseId)?.done;
  }

  /** Where the release's job stands. */
  progress(studyId: string, releaseId: string): ReleaseProgress {
    const summary = this.summary(studyId, releaseId);
    const job = this.jobs.get(releaseId);
    const now = this.clock();
    if (job) {
      return {
        releaseId,
        status: job.status,
        phase: job.phase,
        percent: Math.round(job.percent * 10) / 10,
        startedAt: job.startedAt.toISOString(),
        finishedAt: job.finishedAt?.toISOString() ?? null,
        elapsedMs: (job.finishedAt ?? now).getTime() - job.startedAt.getTime(),
        sessionCount: job.sessionCount,
        error: job.error,
      };
    }
    const finishedAt = summary.completedAt;
    return {
      releaseId,
      status: summary.status,
      phase: summary.status === 'complete' ? 'Done' : summary.status === 'failed' ? 'Failed' : 'Interrupted by a restart of the server',
      percent: summary.status === 'complete' ? 100 : 0,
      startedAt: summary.requestedAt,
      finishedAt,
      elapsedMs: finishedAt ? Date.parse(finishedAt) - Date.parse(summary.requestedAt) : 0,
      sessionCount: summary.sessionCount,
      error: summary.error,
    };
  }

  /** The study's releases, newest first, as the audit trail records them. */
  list(studyId: string): ReleaseSummary[] {
    this.requireStudy(studyId);
    const ids = [...new Set(this.repository.releaseEvents(studyId).map((event) => event.entityId))];
    return ids.map((releaseId) => this.summary(studyId, releaseId)).sort((a, b) => (a.requestedAt < b.requestedAt ? 1 : -1));
  }

  /** The release, its stored manifest and the verification of both against the audit trail and storage. */
  async detail(studyId: string, releaseId: string): Promise<{ release: ReleaseSummary; manifest: ReleaseManifest | null; verification: ReleaseVerification | null }> {
    const release = this.summary(studyId, releaseId);
    if (release.status !== 'complete') return { release, manifest: null, verification: null };
    const storedText = await this.store.getText(releaseKey(studyId, releaseId, MANIFEST_FILE));
    const parsed = storedText === undefined ? undefined : parseManifest(storedText);
    const manifest = parsed && 'manifest' in parsed ? parsed.manifest : null;
    const storedFiles = new Map<string, { sha256: string; sizeBytes: number } | null>();
    for (const file of manifest?.files ?? []) {
      storedFiles.set(file.name, isReleaseFileName(file.name) ? await this.store.digest(releaseKey(studyId, releaseId, file.name)) : null);
    }
    const verification = verifyRelease({
      releaseId,
      storedText,
      recordedSha256: release.manifestSha256 ?? undefined,
      signatureValid: (stored) => this.signatureValid(studyId, releaseId, stored),
      storedFiles,
    });
    return { release, manifest, verification: { ...verification, checkedAt: this.clock().toISOString() } };
  }

  /**
   * A file of a complete release as a stream, after checking the manifest against the audit trail
   * and the file's bytes against the manifest: a changed file or manifest is refused (409).
   */
  async openFile(studyId: string, releaseId: string, fileName: string): Promise<{ file: ManifestFile; stream: Readable }> {
    const release = this.summary(studyId, releaseId);
    if (release.status !== 'complete') {
      throw AppError.conflict(`Release ${releaseId} is ${release.status}: it has no files to download.`, undefined, 'release-not-complete');
    }
    const storedText = await this.store.getText(releaseKey(studyId, releaseId, MANIFEST_FILE));
    const manifestSha256 = storedText === undefined ? undefined : sha256Hex(storedText);
    if (manifestSha256 !== release.manifestSha256) {
      throw AppError.conflict(
        storedText === undefined
          ? `The manifest of release ${releaseId} is missing from storage; no file is served.`
          : `The manifest of release ${releaseId} was changed after the release (SHA-256 ${manifestSha256}, the audit trail recorded ${release.manifestSha256}); no file is served.`,
        undefined,
        'release-tampered',
      );
    }
    if (fileName === MANIFEST_FILE) {
      const bytes = Buffer.from(storedText!, 'utf8');
      return {
        file: { name: MANIFEST_FILE, contentType: 'application/json', sizeBytes: bytes.length, sha256: manifestSha256! },
        stream: Readable.from([bytes]),
      };
    }
    const parsed = parseManifest(storedText!);
    const file = 'manifest' in parsed ? parsed.manifest.files.find((entry) => entry.name === fileName) : undefined;
    if (!file) throw AppError.notFound(`Release ${releaseId} has no file named ${fileName}.`);
    const key = releaseKey(studyId, releaseId, fileName);
    const digest = await this.store.digest(key);
    if (!digest) throw AppError.conflict(`File ${fileName} of release ${releaseId} is missing from storage.`, undefined, 'release-tampered');
    if (digest.sha256 !== file.sha256 || digest.sizeBytes !== file.sizeBytes) {
      throw AppError.conflict(
        `File ${fileName} of release ${releaseId} was changed after the release: its SHA-256 is ${digest.sha256}, the manifest says ${file.sha256}. It is not served.`,
        { expectedSha256: file.sha256, actualSha256: digest.sha256 },
        'release-tampered',
      );
    }
    const stream = await this.store.open(key);
    if (!stream) throw AppError.conflict(`File ${fileName} of release ${releaseId} is missing from storage.`, undefined, 'release-tampered');
    return { file, stream };
  }

  private async run(
    job: Job,
    actor: AuditActor,
    study: ReleaseStudyRow,
    order: ReleaseOrder,
    signature: ReleaseManifest['signature'],
    plan: ReleasePlan,
  ): Promise<void> {
    const folder = await fs.promises.mkdtemp(path.join(os.tmpdir(), 'tidemark-release-'));
    const stored: string[] = [];
    let workbook: WorkbookJob | undefined;
    try {
      const asOf = plan.dataAsOf;
      const studyFacts = { code: study.code, title: study.title, sponsor: study.sponsor };
      const context = {
        folder,
        study: studyFacts,
        releaseId: order.releaseId,
        dataCutAt: order.dataCutAt,
        dataAsOf: asOf,
        signer: signature,
        caution: RELEASE_CAUTION,
      };
      const done: Record<BuildStep, number> = { sessionTables: 0, effortTables: 0, transport: 0, workbook: 0 };
      const showProgress = (phase: string | undefined, step: BuildStep, fraction: number) => {
        if (phase) job.phase = phase;
        done[step] = Math.min(1, fraction);
        const steps = Object.keys(STEP_WEIGHTS) as BuildStep[];
        const weighed = steps.reduce((sum, each) => sum + done[each] * STEP_WEIGHTS[each], 0);
        job.percent = (BUILD_SHARE * weighed) / steps.reduce((sum, each) => sum + STEP_WEIGHTS[each], 0);
      };
      // The workbook is written from the CSV files as they are written, beside everything else.
      const workbookPath = path.join(folder, 'release.xlsx');
      const workbookRows = plan.sessions.length * (2 + RE_DERIVED_RECORDS_PER_SESSION) + plan.effortCount;
      let rowsWritten = 0;
      const workbookJob = startWorkbook({ files: tableFilesIn(folder), context, filePath: workbookPath }, (rows) => {
        rowsWritten += rows;
        showProgress(undefined, 'workbook', rowsWritten / workbookRows);
      }, this.logger);
      workbook = workbookJob;
      const workbookDone = workbookJob.done.then(
        (digest) => ({ digest }),
        (error: unknown) => ({ error }),
      );
      // Each file of the release goes to storage as soon as it is written, while the next one is
      // being built; the CSV files stay on disk until the end, for the transport file and the workbook.
      const files: BuiltFile[] = [];
      let storing = Promise.resolve();
      let storeFailure: unknown;
      const storeFile = (file: BuiltFile) => {
        files.push(file);
        storing = storing
          .then(async () => {
            if (storeFailure) return;
            const key = releaseKey(order.studyId, order.releaseId, file.name);
            await this.store.putFile(key, file.path, file.digest, file.contentType);
            stored.push(key);
          })
          .catch((error: unknown) => {
            storeFailure ??= error;
          });
      };
      const tableReady = (file: BuiltFile) => {
        workbookJob.fileComplete(file.path, file.digest.sizeBytes);
        if (isReleaseFileName(file.name)) storeFile(file);
      };
      const tables = await writeTables(
        releaseSource(this.repository, study.code, plan),
        context,
        (phase, sessions, total) => showProgress(phase, phase === TABLE_PHASES.sessions ? 'sessionTables' : 'effortTables', sessions / total),
        tableReady,
      );
      await writeTransportAndDefine(tables, context, (phase, records, total) => showProgress(phase, 'transport', records / total), storeFile);
      // Every row was read in the passes over the sessions: checked now, beside the workbook rather than after it.
      if (this.fingerprintNow(order.studyId, order.scope) !== order.dataFingerprint) {
        throw new ReleaseProblem('The released data changed while the files were being written (a session was unlocked and changed); ask for the release again.');
      }
      job.phase = 'Writing the workbook';
      const workbookOutcome = await workbookDone;
      if ('error' in workbookOutcome) throw workbookOutcome.error;
      storeFile({ name: 'release.xlsx', contentType: contentTypeOf('release.xlsx'), path: workbookPath, digest: workbookOutcome.digest });
      job.phase = 'Storing the files';
      await storing;
      if (storeFailure) throw storeFailure;
      job.percent = 99;
      job.phase = 'Writing the manifest';
      const manifest: ReleaseManifest = {
        format: MANIFEST_FORMAT,
        order,
        signature,
        study: studyFacts,
        dataAsOf: asOf,
        completedAt: this.clock().toISOString(),
        counts: { sessions: tables.counts.sessions, efforts: tables.counts.efforts, reRecords: tables.counts.reRecords },
        files: files
          .map((file) => ({ name: file.name, contentType: file.contentType, sizeBytes: file.digest.sizeBytes, sha256: file.digest.sha256 }))
          .sort((a, b) => (a.name < b.name ? -1 : 1)),
        caution: RELEASE_CAUTION,
      };
      const text = manifestText(manifest);
      const manifestKey = releaseKey(order.studyId, order.releaseId, MANIFEST_FILE);
      await this.store.putText(manifestKey, text, 'application/json');
      stored.push(manifestKey);
      const manifestSha256 = sha256Hex(text);
      const mail = this.audit.write(actor, (record) => {
        record({
          studyId: order.studyId,
          entity: 'release',
          entityId: order.releaseId,
          action: 'complete',
          newValue: { manifestSha256, completedAt: manifest.completedAt, counts: manifest.counts, files: manifest.files },
        });
        return this.messages.enqueue(order.requestedBy.userId, this.readyNotice(order, manifest, manifestSha256));
      });
      if (mail) this.messages.deliver(mail);
      job.status = 'complete';
      job.phase = 'Done';
      job.percent = 100;
    } catch (error) {
      const message =
        error instanceof ReleaseProblem || error instanceof ReleaseDataChanged || error instanceof AppError
          ? error.message
          : 'The release could not be built (an unexpected error; see the server log).';
      this.logger.error({ err: error, releaseId: order.releaseId }, 'release failed');
      job.status = 'failed';
      job.phase = 'Failed';
      job.error = message;
      for (const key of stored) await this.store.delete(key).catch(() => undefined);
      this.recordFailure(actor, order, message);
    } finally {
      workbook?.stop();
      job.finishedAt = this.clock();
      await fs.promises.rm(folder, { recursive: true, force: true });
    }
  }

  private recordFailure(actor: AuditActor, order: ReleaseOrder, message: string): void {
    try {
      let mail: PendingMessage | undefined;
      this.audit.write(actor, (record) => {
        record({ studyId: order.studyId, entity: 'release', entityId: order.releaseId, action: 'fail', newValue: { error: message } });
        mail = this.messages.enqueue(order.requestedBy.userId, {
          subject: `Release failed: ${order.studyCode}`,
          body: `The dataset release ${order.releaseId} of ${order.studyCode} (data cut ${order.dataCutAt}) could not be completed: ${message}`,
          link: `/data-office/releases/${order.studyId}/${order.releaseId}`,
        });
      });
      if (mail) this.messages.deliver(mail);
    } catch (error) {
      this.logger.error({ err: error, releaseId: order.releaseId }, 'the failure of a release could not be recorded');
    }
  }

  private readyNotice(order: ReleaseOrder, manifest: ReleaseManifest, manifestSha256: string) {
    const files = manifest.files.map((file) => `  ${file.name}  ${file.sizeBytes} bytes  SHA-256 ${file.sha256}`).join('\n');
    return {
      subject: `Release ready: ${order.studyCode}, ${manifest.counts.sessions} sessions`,
      body:
        `The dataset release ${order.releaseId} of ${order.studyCode} is ready: ${manifest.counts.sessions} locked sessions, ` +
        `${manifest.counts.efforts} efforts, ${manifest.counts.reRecords} SDTM RE records, data cut ${order.dataCutAt}. ` +
        `It was signed by ${manifest.signature.printedName} at ${manifest.signature.signedAt} (meaning: released).\n\n` +
        `Files:\n${files}\nManifest SHA-256 ${manifestSha256}\n\nEach download is checked against the manifest first.\n\n${RELEASE_CAUTION}`,
      link: `/data-office/releases/${order.studyId}/${order.releaseId}`,
    };
  }

  /** The signature of the release still matches the order in the stored manifest, and is the one the request recorded. */
  private signatureValid(studyId: string, releaseId: string, manifest: ReleaseManifest): boolean | undefined {
    const request = this.requestOf(studyId, releaseId);
    try {
      const shown = this.signatures.manifestation(manifest.signature.signatureId, manifest.order);
      return shown.valid && shown.meaning === 'released' && request?.signatureId === manifest.signature.signatureId;
    } catch (error) {
      if (error instanceof AppError && error.status === 404) return undefined;
      throw error;
    }
  }

  private requestOf(studyId: string, releaseId: string): { order: ReleaseOrder; signatureId: string } | undefined {
    const event = this.repository.releaseEvents(studyId, releaseId).find((row) => row.action === 'request');
    return event?.newValue ? (JSON.parse(event.newValue) as { order: ReleaseOrder; signatureId: string }) : undefined;
  }

  /** A release as the audit trail (and a job still running) tell it; 404 when there is none. */
  private summary(studyId: string, releaseId: string): ReleaseSummary {
    const events = this.repository.releaseEvents(studyId, releaseId);
    const request = events.find((event) => event.action === 'request');
    if (!request?.newValue) throw AppError.notFound(`This study has no release ${releaseId}.`);
    const { order, signatureId } = JSON.parse(request.newValue) as { order: ReleaseOrder; signatureId: string };
    const complete = events.find((event) => event.action === 'complete');
    const failed = events.find((event) => event.action === 'fail');
    const completed = complete?.newValue
      ? (JSON.parse(complete.newValue) as { manifestSha256: string; completedAt: string; files: ManifestFile[] })
      : undefined;
    const job = this.jobs.get(releaseId);
    const status: ReleaseStatus = completed ? 'complete' : failed ? 'failed' : job?.status === 'running' ? 'running' : 'interrupted';
    return {
      releaseId,
      status,
      requestedAt: request.at,
      requestedBy: order.requestedBy.printedName,
      signature: this.releaseSignature(signatureId, order),
      reason: order.reason,
      scope: order.scope,
      dataCutAt: order.dataCutAt,
      sessionCount: order.sessionCount,
      completedAt: completed?.completedAt ?? failed?.at ?? null,
      manifestSha256: completed?.manifestSha256 ?? null,
      files: (completed?.files ?? []).map(({ name, sizeBytes, sha256 }) => ({ name, sizeBytes, sha256 })),
      error: failed?.newValue ? (JSON.parse(failed.newValue) as { error: string }).error : null,
    };
  }

  /** The manifestation of the signature over the release order, for the list; null when its row is gone. */
  private releaseSignature(signatureId: string, order: ReleaseOrder): ReleaseSummary['signature'] {
    try {
      const shown = this.signatures.manifestation(signatureId, order);
      return shown.meaning === 'released' ? { signatureId, printedName: shown.printedName, meaning: 'released', signedAt: shown.signedAt } : null;
    } catch (error) {
      if (error instanceof AppError && error.status === 404) return null;
      throw error;
    }
  }

  private requireStudy(studyId: string): ReleaseStudyRow {
    const study = this.repository.findStudy(studyId);
    if (!study) throw AppError.notFound('There is no such study.');
    return study;
  }

  /** The scope's sessions with their locks and final reads (those with a stored result). */
  private snapshot(studyId: string, scope: ReleaseScope): Snapshot {
    const sessions = sessionsInScope(this.repository.sessionHeads(studyId), scope);
    const chosen = [...this.finalReads(studyId, sessions)];
    const finalReads = new Map<string, SignedReadHead>();
    // A batch of stored results at a time: a study's results at once would hold tens of megabytes.
    for (let start = 0; start < chosen.length; start += RESULT_CHECK_BATCH) {
      const batch = chosen.slice(start, start + RESULT_CHECK_BATCH);
      const stored = this.repository.signedReadsById(batch.map(([, read]) => read.id));
      for (const [sessionId, read] of batch) {
        // A signed read without its stored result is not a final read a release can use.
        const resultJson = stored.get(read.id)?.resultJson;
        if (resultJson && readResultSchema.safeParse(JSON.parse(resultJson)).success) finalReads.set(sessionId, read);
      }
    }
    return { sessions, locks: this.repository.activeLocks(studyId), finalReads };
  }

  /** The fingerprint of the scope's data now, to compare with the one the release was ordered with. */
  private fingerprintNow(studyId: string, scope: ReleaseScope): string {
    return dataFingerprint(this.repository.fingerprintRows(studyId), scope);
  }

  /** Each session's final read, without its stored result. */
  private finalReads(studyId: string, sessions: readonly SessionHead[]): Map<string, SignedReadHead> {
    const readsBySession = new Map<string, SignedReadHead[]>();
    for (const read of this.repository.signedReads(studyId)) {
      const list = readsBySession.get(read.sessionId) ?? [];
      list.push(read);
      readsBySession.set(read.sessionId, list);
    }
    const finalReads = new Map<string, SignedReadHead>();
    for (const session of sessions) {
      const read = finalReadOf(session, readsBySession.get(session.id) ?? []);
      if (read) finalReads.set(session.id, read);
    }
    return finalReads;
  }
}

/** A release that cannot complete for a reason the data manager can act on. */
class ReleaseProblem extends Error {}
