import { and, asc, count, desc, eq, inArray, isNull, or, type SQL } from 'drizzle-orm';
import type { SessionListFilters } from '../../shared/contracts/sessions.js';
import type { TidemarkDatabase } from '../db/database.js';
import { dataLocks, efforts, sites, subjects, testSessions, timepoints, uploads, visits } from '../db/schema.js';

export type SessionRow = typeof testSessions.$inferSelect;
export type NewSessionRow = typeof testSessions.$inferInsert;
export type UploadRow = typeof uploads.$inferSelect;
export type EffortRow = typeof efforts.$inferSelect;
export type SubjectRow = typeof subjects.$inferSelect;
export type VisitRow = typeof visits.$inferSelect;
export type TimepointRow = typeof timepoints.$inferSelect;
export type LockRow = typeof dataLocks.$inferSelect;

/** A session row with the codes people read instead of ids. */
export interface SessionListRow {
  readonly session: SessionRow;
  readonly siteNumber: string;
  readonly subjectCode: string;
  readonly visitCode: string;
  readonly timepointCode: string;
  readonly effortCount: number;
}

const SORT_COLUMNS = {
  testedAt: testSessions.testedAt,
  registeredAt: testSessions.registeredAt,
  updatedAt: testSessions.updatedAt,
  subjectCode: subjects.code,
  visitCode: visits.ordinal,
  status: testSessions.status,
  siteNumber: sites.number,
} as const;

/** Sessions, their subjects, schedule, uploads and efforts. */
export class SessionRepository {
  constructor(private readonly db: TidemarkDatabase) {}

  findSubject(studyId: string, code: string): SubjectRow | undefined {
    return this.db
      .select()
      .from(subjects)
      .where(and(eq(subjects.studyId, studyId), eq(subjects.code, code)))
      .get();
  }

  subjectsOfSite(studyId: string, siteId: string): SubjectRow[] {
    return this.db
      .select()
      .from(subjects)
      .where(and(eq(subjects.studyId, studyId), eq(subjects.siteId, siteId)))
      .orderBy(asc(subjects.code))
      .all();
  }

  insertSubject(row: typeof subjects.$inferInsert): void {
    this.db.insert(subjects).values(row).run();
  }

  visitsOf(studyId: string): VisitRow[] {
    return this.db.select().from(visits).where(eq(visits.studyId, studyId)).orderBy(asc(visits.ordinal)).all();
  }

  timepointsOf(studyId: string): TimepointRow[] {
    return this.db.select().from(timepoints).where(eq(timepoints.studyId, studyId)).orderBy(asc(timepoints.ordinal)).all();
  }

  findSession(studyId: string, sessionId: string): SessionRow | undefined {
    return this.db
      .select()
      .from(testSessions)
      .where(and(eq(testSessions.studyId, studyId), eq(testSessions.id, sessionId)))
      .get();
  }

  findSessionById(sessionId: string): SessionRow | undefined {
    return this.db.select().from(testSessions).where(eq(testSessions.id, sessionId)).get();
  }

  findSessionInSlot(slot: Pick<SessionRow, 'subjectId' | 'visitId' | 'timepointId' | 'bronchodilator'>): SessionRow | undefined {
    return this.db
      .select()
      .from(testSessions)
      .where(
        and(
          eq(testSessions.subjectId, slot.subjectId),
          eq(testSessions.visitId, slot.visitId),
          eq(testSessions.timepointId, slot.timepointId),
          eq(testSessions.bronchodilator, slot.bronchodilator),
        ),
      )
      .get();
  }

  insertSession(row: NewSessionRow): void {
    this.db.insert(testSessions).values(row).run();
  }

  updateSession(sessionId: string, changes: Partial<NewSessionRow>): void {
    this.db.update(testSessions).set(changes).where(eq(testSessions.id, sessionId)).run();
  }

  /** One page of sessions with filters and sort, and the total before paging. */
  pageOfSessions(
    studyId: string,
    onlySiteIds: readonly string[] | undefined,
    query: SessionListFilters,
  ): { rows: SessionListRow[]; total: number } {
    const filters: (SQL | undefined)[] = [
      eq(testSessions.studyId, studyId),
      onlySiteIds ? inArray(testSessions.siteId, [...onlySiteIds]) : undefined,
      query.siteId ? eq(testSessions.siteId, query.siteId) : undefined,
      query.status ? eq(testSessions.status, query.status) : undefined,
      query.subjectCode ? eq(subjects.code, query.subjectCode) : undefined,
      query.visitCode ? eq(visits.code, query.visitCode) : undefined,
    ];
    const where = and(...filters);
    const total =
      this.db
        .select({ value: count() })
        .from(testSessions)
        .innerJoin(subjects, eq(subjects.id, testSessions.subjectId))
        .innerJoin(visits, eq(visits.id, testSessions.visitId))
        .where(where)
        .get()?.value ?? 0;
    const sortColumn = SORT_COLUMNS[query.sort];
    const order = query.direction === 'asc' ? asc(sortColumn) : desc(sortColumn);
    const rows = this.selectWithCodes()
      .where(where)
      .orderBy(order, desc(testSessions.id))
      .limit(query.pageSize)
      .offset(query.page * query.pageSize)
      .all();
    return { rows, total };
  }

  /** One session with its codes, or undefined. */
  sessionWithCodes(sessionId: string): SessionListRow | undefined {
    return this.selectWithCodes().where(eq(testSessions.id, sessionId)).get();
  }

  /** Sessions joined to the site number, subject, visit and timepoint codes people read. */
  private selectWithCodes() {
    return this.db
      .select({
        session: testSessions,
        siteNumber: sites.number,
        subjectCode: subjects.code,
        visitCode: visits.code,
        timepointCode: timepoints.code,
        effortCount: this.effortCountColumn(),
      })
      .from(testSessions)
      .innerJoin(sites, eq(sites.id, testSessions.siteId))
      .innerJoin(subjects, eq(subjects.id, testSessions.subjectId))
      .innerJoin(visits, eq(visits.id, testSessions.visitId))
      .innerJoin(timepoints, eq(timepoints.id, testSessions.timepointId));
  }

  private effortCountColumn() {
    return this.db.$count(
      efforts,
      and(eq(efforts.sessionId, testSessions.id), eq(efforts.uploadId, testSessions.currentUploadId)),
    );
  }

  findUploadBySha256(studyId: string, sha256: string): UploadRow | undefined {
    return this.db
      .select()
      .from(uploads)
      .where(and(eq(uploads.studyId, studyId), eq(uploads.sha256, sha256)))
      .get();
  }

  findUpload(uploadId: string): UploadRow | undefined {
    return this.db.select().from(uploads).where(eq(uploads.id, uploadId)).get();
  }

  findUploadByObjectKey(objectKey: string): UploadRow | undefined {
    return this.db.select().from(uploads).where(eq(uploads.objectKey, objectKey)).get();
  }

  uploadsOf(sessionId: string): UploadRow[] {
    return this.db.select().from(uploads).where(eq(uploads.sessionId, sessionId)).orderBy(asc(uploads.receivedAt)).all();
  }

  insertUpload(row: UploadRow): void {
    this.db.insert(uploads).values(row).run();
  }

  updateUpload(uploadId: string, changes: Partial<UploadRow>): void {
    this.db.update(uploads).set(changes).where(eq(uploads.id, uploadId)).run();
  }

  effortsOf(uploadId: string): EffortRow[] {
    return this.db.select().from(efforts).where(eq(efforts.uploadId, uploadId)).orderBy(asc(efforts.effortIndex)).all();
  }

  deleteEffortsOf(uploadId: string): void {
    this.db.delete(efforts).where(eq(efforts.uploadId, uploadId)).run();
  }

  insertEfforts(rows: EffortRow[]): void {
    if (rows.length > 0) this.db.insert(efforts).values(rows).run();
  }

  /** The first active lock that covers the session (study, site, subject, visit or the session itself). */
  activeLockOn(session: Pick<SessionRow, 'id' | 'studyId' | 'siteId' | 'subjectId' | 'visitId'>): LockRow | undefined {
    return this.db
      .select()
      .from(dataLocks)
      .where(
        and(
          eq(dataLocks.studyId, session.studyId),
          isNull(dataLocks.unlockedAt),
          or(
            eq(dataLocks.scope, 'study'),
            and(eq(dataLocks.scope, 'site'), eq(dataLocks.scopeId, session.siteId)),
            and(eq(dataLocks.scope, 'subject'), eq(dataLocks.scopeId, session.subjectId)),
            and(eq(dataLocks.scope, 'visit'), eq(dataLocks.scopeId, session.visitId)),
            and(eq(dataLocks.scope, 'session'), eq(dataLocks.scopeId, session.id)),
          ),
        ),
      )
      .orderBy(asc(dataLocks.lockedAt))
      .get();
  }

  /** Every active lock of a study, to test many sessions against in memory. */
  activeLocksOfStudy(studyId: string): LockRow[] {
    return this.db
      .select()
      .from(dataLocks)
      .where(and(eq(dataLocks.studyId, studyId), isNull(dataLocks.unlockedAt)))
      .all();
  }

  insertLock(row: typeof dataLocks.$inferInsert): void {
    this.db.insert(dataLocks).values(row).run();
  }

  /** Keys of every stored upload, for the start-up sweep. */
  allObjectKeys(): Set<string> {
    return new Set(
      this.db
        .select({ key: uploads.objectKey })
        .from(uploads)
        .all()
        .map((row) => row.key),
    );
  }
}
