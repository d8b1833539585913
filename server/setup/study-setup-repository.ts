import { and, asc, count, eq, isNull, ne, sql } from 'drizzle-orm';
import type { TidemarkDatabase } from '../db/database.js';
import { calibrationChecks, roleAssignments, sites, studies, subjects, testSessions, timepoints, users, visits } from '../db/schema.js';

export type StudyRow = typeof studies.$inferSelect;
export type NewStudyRow = typeof studies.$inferInsert;
export type SiteRow = typeof sites.$inferSelect;
export type VisitRow = typeof visits.$inferSelect;
export type TimepointRow = typeof timepoints.$inferSelect;
export type UserRow = typeof users.$inferSelect;
export type RoleAssignmentRow = typeof roleAssignments.$inferSelect;

/** A role assignment with the person who holds it. */
export interface AssignmentWithUser {
  readonly assignment: RoleAssignmentRow;
  readonly user: UserRow;
}

/** Reads and writes of a study's configuration: the study row, schedule, sites, people and their roles. */
export class StudySetupRepository {
  constructor(private readonly db: TidemarkDatabase) {}

  findStudy(studyId: string): StudyRow | undefined {
    return this.db.select().from(studies).where(eq(studies.id, studyId)).get();
  }

  /** A study using this code in any letter case, other than `exceptStudyId`. */
  findStudyByCode(code: string, exceptStudyId?: string): StudyRow | undefined {
    return this.db
      .select()
      .from(studies)
      .where(and(eq(sql`upper(${studies.code})`, code.toUpperCase()), exceptStudyId ? ne(studies.id, exceptStudyId) : undefined))
      .get();
  }

  insertStudy(row: NewStudyRow): void {
    this.db.insert(studies).values(row).run();
  }

  updateStudy(studyId: string, changes: Partial<NewStudyRow>): void {
    this.db.update(studies).set(changes).where(eq(studies.id, studyId)).run();
  }

  countSessions(studyId: string): number {
    return this.db.select({ n: count() }).from(testSessions).where(eq(testSessions.studyId, studyId)).get()?.n ?? 0;
  }

  visitsOf(studyId: string): VisitRow[] {
    return this.db.select().from(visits).where(eq(visits.studyId, studyId)).orderBy(asc(visits.ordinal)).all();
  }

  timepointsOf(studyId: string): TimepointRow[] {
    return this.db.select().from(timepoints).where(eq(timepoints.studyId, studyId)).orderBy(asc(timepoints.ordinal)).all();
  }

  /** Sessions per visit id, for visits that have any. */
  sessionCountsByVisit(studyId: string): Map<string, number> {
    const rows = this.db
      .select({ id: testSessions.visitId, n: count() })
      .from(testSessions)
      .where(eq(testSessions.studyId, studyId))
      .groupBy(testSessions.visitId)
      .all();
    return new Map(rows.map((row) => [row.id, row.n]));
  }

  /** Sessions per timepoint id, for timepoints that have any. */
  sessionCountsByTimepoint(studyId: string): Map<string, number> {
    const rows = this.db
      .select({ id: testSessions.timepointId, n: count() })
      .from(testSessions)
      .where(eq(testSessions.studyId, studyId))
      .groupBy(testSessions.timepointId)
      .all();
    return new Map(rows.map((row) => [row.id, row.n]));
  }

  insertVisit(row: VisitRow): void {
    this.db.insert(visits).values(row).run();
  }

  updateVisit(id: string, changes: Omit<VisitRow, 'id' | 'studyId' | 'code'>): void {
    this.db.update(visits).set(changes).where(eq(visits.id, id)).run();
  }

  deleteVisit(id: string): void {
    this.db.delete(visits).where(eq(visits.id, id)).run();
  }

  insertTimepoint(row: TimepointRow): void {
    this.db.insert(timepoints).values(row).run();
  }

  updateTimepoint(id: string, changes: Pick<TimepointRow, 'name' | 'ordinal'>): void {
    this.db.update(timepoints).set(changes).where(eq(timepoints.id, id)).run();
  }

  deleteTimepoint(id: string): void {
    this.db.delete(timepoints).where(eq(timepoints.id, id)).run();
  }

  sitesOf(studyId: string): SiteRow[] {
    return this.db.select().from(sites).where(eq(sites.studyId, studyId)).orderBy(asc(sites.number)).all();
  }

  /** A site by id in any study, so that a site of another study can be told apart from no site at all. */
  findSiteAnywhere(siteId: string): SiteRow | undefined {
    return this.db.select().from(sites).where(eq(sites.id, siteId)).get();
  }

  /** A site of the study using this number in any letter case, other than `exceptSiteId`. */
  findSiteByNumber(studyId: string, number: string, exceptSiteId?: string): SiteRow | undefined {
    return this.db
      .select()
      .from(sites)
      .where(
        and(
          eq(sites.studyId, studyId),
          eq(sql`upper(${sites.number})`, number.toUpperCase()),
          exceptSiteId ? ne(sites.id, exceptSiteId) : undefined,
        ),
      )
      .get();
  }

  insertSite(row: typeof sites.$inferInsert): void {
    this.db.insert(sites).values(row).run();
  }

  updateSite(siteId: string, changes: Pick<SiteRow, 'number' | 'name' | 'countryCode' | 'timeZone'>): void {
    this.db.update(sites).set(changes).where(eq(sites.id, siteId)).run();
  }

  deleteSite(siteId: string): void {
    this.db.delete(sites).where(eq(sites.id, siteId)).run();
  }

  /** What is recorded at a site: while any of it exists the site cannot be removed. */
  siteHoldings(siteId: string): { subjects: number; sessions: number; calibrationChecks: number } {
    const countWhere = <T extends typeof subjects | typeof testSessions | typeof calibrationChecks>(table: T) =>
      this.db.select({ n: count() }).from(table).where(eq(table.siteId, siteId)).get()?.n ?? 0;
    return { subjects: countWhere(subjects), sessions: countWhere(testSessions), calibrationChecks: countWhere(calibrationChecks) };
  }

  /** Every role assignment of the study with its holder, ordered by name. */
  assignmentsOfStudy(studyId: string): AssignmentWithUser[] {
    return this.db
      .select({ assignment: roleAssignments, user: users })
      .from(roleAssignments)
      .innerJoin(users, eq(users.id, roleAssignments.userId))
      .where(eq(roleAssignments.studyId, studyId))
      .orderBy(asc(users.name), asc(users.email), asc(roleAssignments.role))
      .all();
  }

  assignmentsOfSite(siteId: string): RoleAssignmentRow[] {
    return this.db.select().from(roleAssignments).where(eq(roleAssignments.siteId, siteId)).all();
  }

  /** A user's assignments of one role in the study (several rows for a coordinator of several sites). */
  assignmentsOf(userId: string, studyId: string, role?: string): RoleAssignmentRow[] {
    return this.db
      .select()
      .from(roleAssignments)
      .where(and(eq(roleAssignments.userId, userId), eq(roleAssignments.studyId, studyId), role ? eq(roleAssignments.role, role) : undefined))
      .all();
  }

  /** Active users holding a study-wide `role` in the study. */
  activeHoldersOf(studyId: string, role: string): UserRow[] {
    return this.db
      .selectDistinct({ user: users })
      .from(roleAssignments)
      .innerJoin(users, eq(users.id, roleAssignments.userId))
      .where(and(eq(roleAssignments.studyId, studyId), eq(roleAssignments.role, role), isNull(roleAssignments.siteId), eq(users.active, true)))
      .all()
      .map((row) => row.user);
  }

  /** Studies in which the user holds the study-admin role. */
  /** Ids of every study in which the user holds any role. */
  studyIdsOf(userId: string): string[] {
    return this.db
      .selectDistinct({ studyId: roleAssignments.studyId })
      .from(roleAssignments)
      .where(eq(roleAssignments.userId, userId))
      .all()
      .map((row) => row.studyId);
  }

  studiesAdministeredBy(userId: string): StudyRow[] {
    return this.db
      .selectDistinct({ study: studies })
      .from(roleAssignments)
      .innerJoin(studies, eq(studies.id, roleAssignments.studyId))
      .where(and(eq(roleAssignments.userId, userId), eq(roleAssignments.role, 'study-admin')))
      .all()
      .map((row) => row.study);
  }

  insertAssignment(row: typeof roleAssignments.$inferInsert): void {
    this.db.insert(roleAssignments).values(row).run();
  }

  deleteAssignment(id: string): void {
    this.db.delete(roleAssignments).where(eq(roleAssignments.id, id)).run();
  }

  findUserByEmail(email: string): UserRow | undefined {
    return this.db.select().from(users).where(eq(users.email, email.toLowerCase())).get();
  }

  findUser(userId: string): UserRow | undefined {
    return this.db.select().from(users).where(eq(users.id, userId)).get();
  }

  insertUser(row: typeof users.$inferInsert): void {
    this.db.insert(users).values(row).run();
  }

  setUserActive(userId: string, active: boolean): void {
    this.db.update(users).set({ active }).where(eq(users.id, userId)).run();
  }
}
