import { randomUUID } from 'node:crypto';
import type {
  CorrectSession,
  RegisterSession,
  Schedule,
  SessionDetail,
  SessionListFilters,
  SessionPage,
  Subject,
} from '../../shared/contracts/sessions.js';
import type { AuditActor, AuditTrail } from '../audit/audit-trail.js';
import { AppError } from '../http/app-error.js';
import { siteInScope, type SiteScope } from '../http/access.js';
import type { LockGuard } from '../locks/lock-guard.js';
import { lockCovers } from '../locks/lock-scope.js';
import type { StudyRepository } from '../studies/study-repository.js';
import type { SessionRepository, SessionRow } from './session-repository.js';
import { describeSession, toSessionDetail, toSessionSummary } from './session-views.js';

/** Test dates before this are typing mistakes, not trial data. Common practice. */
const EARLIEST_TEST_DATE = '2000-01-01T00:00:00Z';

/** Registration, correction and reading of sessions, always inside the caller's site scope. */
export class SessionService {
  constructor(
    private readonly sessions: SessionRepository,
    private readonly studies: StudyRepository,
    private readonly audit: AuditTrail,
    private readonly clock: () => Date,
    /** Refuses new subjects and sessions inside a locked study, site, subject or visit. */
    private readonly locks: LockGuard,
  ) {}

  schedule(studyId: string): Schedule {
    return {
      visits: this.sessions.visitsOf(studyId).map((visit) => ({
        code: visit.code,
        name: visit.name,
        dayOffset: visit.dayOffset,
        windowBeforeDays: visit.windowBeforeDays,
        windowAfterDays: visit.windowAfterDays,
      })),
      timepoints: this.sessions.timepointsOf(studyId).map((timepoint) => ({ code: timepoint.code, name: timepoint.name })),
    };
  }

  subjects(studyId: string, siteId: string): Subject[] {
    this.requireSite(studyId, siteId);
    return this.sessions.subjectsOfSite(studyId, siteId).map((row) => ({
      id: row.id,
      siteId: row.siteId,
      code: row.code,
      enrolledAt: row.createdAt,
    }));
  }

  enrolSubject(actor: AuditActor, studyId: string, siteId: string, code: string): Subject {
    const site = this.requireSite(studyId, siteId);
    this.locks.assertUnlocked({ studyId, siteId }, `site ${site.number}`);
    const existing = this.sessions.findSubject(studyId, code);
    if (existing) {
      throw AppError.conflict(`Subject code ${code} is already enrolled in this study.`, undefined, 'subject-exists');
    }
    const row = { id: randomUUID(), studyId, siteId, code, createdAt: this.clock().toISOString() };
    this.audit.write(actor, (record) => {
      this.sessions.insertSubject(row);
      record({ studyId, siteId, entity: 'subject', entityId: row.id, action: 'enrol', newValue: { code } });
    });
    return { id: row.id, siteId, code, enrolledAt: row.createdAt };
  }

  /** Registers a session at a site; every problem with the request is named. */
  register(actor: AuditActor, studyId: string, siteId: string, input: RegisterSession): SessionDetail {
    const site = this.requireSite(studyId, siteId);
    const subject = this.sessions.findSubject(studyId, input.subjectCode);
    if (!subject || subject.siteId !== siteId) {
      throw new AppError(
        422,
        'subject-unknown',
        `Subject ${input.subjectCode} is not enrolled at site ${site.number}. Check the code, or enrol the subject first.`,
      );
    }
    const schedule = this.sessions.visitsOf(studyId);
    const visit = schedule.find((candidate) => candidate.code === input.visitCode);
    if (!visit) {
      throw new AppError(
        422,
        'visit-unknown',
        `Visit ${input.visitCode} is not in this study's schedule; the visits are ${schedule.map((v) => v.code).join(', ')}.`,
      );
    }
    this.locks.assertUnlocked(
      { studyId, siteId, subjectId: subject.id, visitId: visit.id },
      `subject ${input.subjectCode} at visit ${input.visitCode}`,
    );
    const timepointList = this.sessions.timepointsOf(studyId);
    const timepoint = timepointList.find((candidate) => candidate.code === input.timepointCode);
    if (!timepoint) {
      throw new AppError(
        422,
        'timepoint-unknown',
        `Timepoint ${input.timepointCode} is not in this study's schedule; the timepoints are ${timepointList.map((t) => t.code).join(', ')}.`,
      );
    }
    const testedAt = this.checkTestedAt(input.testedAt);
    const slot = { subjectId: subject.id, visitId: visit.id, timepointId: timepoint.id, bronchodilator: input.bronchodilator };
    const now = this.clock().toISOString();
    const row: SessionRow = {
      id: randomUUID(),
      studyId,
      siteId,
      ...slot,
      testedAt,
      timeZone: site.timeZone,
      ageYears: input.demographics.ageYears,
      heightCm: input.demographics.heightCm,
      weightKg: input.demographics.weightKg ?? null,
      sex: input.demographics.sex,
      ethnicity: input.demographics.ethnicity ?? null,
      technicianCode: input.technicianCode,
      deviceManufacturer: input.device?.manufacturer || null,
      deviceModel: input.device?.model || null,
      deviceSerialNumber: input.device?.serialNumber || null,
      status: 'awaiting-file',
      rejectionReasons: '[]',
      checkJson: null,
      fev1Grade: null,
      fvcGrade: null,
      currentUploadId: null,
      dualRead: false,
      feedbackReleasedAt: null,
      registeredBy: actor.userId,
      registeredAt: now,
      updatedAt: now,
    };
    this.audit.write(actor, (record) => {
      const taken = this.sessions.findSessionInSlot(slot);
      if (taken) {
        throw AppError.conflict(
          `A session for subject ${input.subjectCode}, visit ${input.visitCode}, timepoint ${input.timepointCode}, ${input.bronchodilator}-bronchodilator is already registered (status ${taken.status}).`,
          { sessionId: taken.id },
          'session-exists',
        );
      }
      this.sessions.insertSession(row);
      record({ studyId, siteId, entity: 'session', entityId: row.id, action: 'register', newValue: registrationValues(row) });
    });
    return this.detailOf(row.id);
  }

  /** Corrects registration data; once a file was received, a reason is required and the change is audited with it. */
  correct(actor: AuditActor, studyId: string, sessionId: string, scope: SiteScope, input: CorrectSession): SessionDetail {
    const session = this.requireSession(studyId, sessionId, scope);
    this.assertWritable(session);
    if (session.status !== 'awaiting-file' && !input.reason) {
      throw AppError.badRequest('A file was already received for this session: give a reason for the correction.', undefined, 'reason-required');
    }
    const changes: Partial<SessionRow> = {};
    if (input.demographics) {
      changes.ageYears = input.demographics.ageYears;
      changes.heightCm = input.demographics.heightCm;
      changes.weightKg = input.demographics.weightKg ?? null;
      changes.sex = input.demographics.sex;
      changes.ethnicity = input.demographics.ethnicity ?? null;
    }
    if (input.technicianCode) changes.technicianCode = input.technicianCode;
    if (input.bronchodilator) changes.bronchodilator = input.bronchodilator;
    if (input.testedAt) changes.testedAt = this.checkTestedAt(input.testedAt);
    const before = registrationValues(session);
    const after = registrationValues({ ...session, ...changes });
    const changedKeys = Object.keys(after).filter(
      (key) => JSON.stringify(before[key as keyof typeof before]) !== JSON.stringify(after[key as keyof typeof after]),
    );
    if (changedKeys.length === 0) return this.detailOf(sessionId);
    this.audit.write(actor, (record) => {
      const taken = changes.bronchodilator ? this.sessions.findSessionInSlot({ ...session, ...changes }) : undefined;
      if (taken && taken.id !== sessionId) {
        throw AppError.conflict(
          `Another session is already registered as the ${changes.bronchodilator}-bronchodilator set of this subject, visit and timepoint.`,
          { sessionId: taken.id },
          'session-exists',
        );
      }
      this.sessions.updateSession(sessionId, { ...changes, updatedAt: this.clock().toISOString() });
      record({
        studyId,
        siteId: session.siteId,
        entity: 'session',
        entityId: sessionId,
        action: 'correct',
        oldValue: Object.fromEntries(changedKeys.map((key) => [key, before[key as keyof typeof before]])),
        newValue: Object.fromEntries(changedKeys.map((key) => [key, after[key as keyof typeof after]])),
        reason: input.reason ?? null,
      });
    });
    return this.detailOf(sessionId);
  }

  page(studyId: string, scope: SiteScope, query: SessionListFilters): SessionPage {
    if (query.siteId && !siteInScope(scope, query.siteId)) {
      throw AppError.forbidden('You are assigned to other sites of this study, not to this one.', 'site-out-of-scope');
    }
    const { rows, total } = this.sessions.pageOfSessions(studyId, scope.allSites ? undefined : scope.siteIds, query);
    // One lock query for the page, not one per row.
    const locks = this.sessions.activeLocksOfStudy(studyId);
    const locked = (session: (typeof rows)[number]['session']): boolean =>
      locks.some((lock) => lockCovers(lock, { studyId, siteId: session.siteId, subjectId: session.subjectId, visitId: session.visitId, sessionId: session.id }));
    return {
      items: rows.map((row) => toSessionSummary(row, locked(row.session))),
      total,
      page: query.page,
      pageSize: query.pageSize,
    };
  }

  detail(studyId: string, sessionId: string, scope: SiteScope): SessionDetail {
    this.requireSession(studyId, sessionId, scope);
    return this.detailOf(sessionId);
  }

  detailOf(sessionId: string): SessionDetail {
    const row = this.sessions.sessionWithCodes(sessionId);
    if (!row) throw AppError.notFound('There is no such session in this study.');
    const uploads = this.sessions.uploadsOf(sessionId);
    const efforts = row.session.currentUploadId ? this.sessions.effortsOf(row.session.currentUploadId) : [];
    return toSessionDetail(row, this.sessions.activeLockOn(row.session), uploads, efforts);
  }

  /** The session, if it exists in this study and inside the caller's sites; 404 otherwise (no hint that it exists). */
  requireSession(studyId: string, sessionId: string, scope: SiteScope): SessionRow {
    const session = this.sessions.findSession(studyId, sessionId);
    if (!session || !siteInScope(scope, session.siteId)) throw AppError.notFound('There is no such session in this study.');
    return session;
  }

  /** Refuses any change to locked data with the lock's reason. */
  assertWritable(session: SessionRow): void {
    const lock = this.sessions.activeLockOn(session);
    if (!lock) return;
    const row = this.sessions.sessionWithCodes(session.id);
    const what = row ? describeSession(row) : 'this session';
    throw AppError.conflict(
      `The data of ${what} is locked (${lock.scope} lock since ${lock.lockedAt}: ${lock.reason}); nothing was changed.`,
      { lockId: lock.id, scope: lock.scope, reason: lock.reason, lockedAt: lock.lockedAt },
      'locked',
    );
  }

  private requireSite(studyId: string, siteId: string) {
    const site = this.studies.findSite(studyId, siteId);
    if (!site) throw AppError.notFound('There is no such site in this study.');
    return site;
  }

  private checkTestedAt(value: string): string {
    const testedAt = new Date(value);
    if (testedAt.getTime() > this.clock().getTime() + 5 * 60_000) {
      throw new AppError(422, 'tested-in-future', `The test time ${value} is in the future.`);
    }
    if (testedAt.toISOString() < EARLIEST_TEST_DATE) {
      throw new AppError(422, 'tested-too-early', `The test time ${value} is before the year 2000; check the date.`);
    }
    return testedAt.toISOString();
  }
}

/** The registration fields that the audit trail records. */
function registrationValues(row: SessionRow) {
  return {
    subjectId: row.subjectId,
    visitId: row.visitId,
    timepointId: row.timepointId,
    bronchodilator: row.bronchodilator,
    testedAt: row.testedAt,
    timeZone: row.timeZone,
    ageYears: row.ageYears,
    heightCm: row.heightCm,
    weightKg: row.weightKg,
    sex: row.sex,
    ethnicity: row.ethnicity,
    technicianCode: row.technicianCode,
    deviceManufacturer: row.deviceManufacturer,
    deviceModel: row.deviceModel,
    deviceSerialNumber: row.deviceSerialNumber,
  };
}
