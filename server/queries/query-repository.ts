import { and, asc, count, desc, eq, inArray, ne, type SQL } from 'drizzle-orm';
import type { TidemarkDatabase } from '../db/database.js';
import { queries, queryMessages, reads, sites, subjects, testSessions, timepoints, users, visits } from '../db/schema.js';

export type QueryRow = typeof queries.$inferSelect;
export type QueryMessageRow = typeof queryMessages.$inferSelect;
export type QueryStatus = QueryRow['status'];

/** A query with the codes people read instead of ids. */
export interface QueryWithCodes {
  readonly query: QueryRow;
  readonly siteNumber: string;
  readonly siteName: string;
  readonly subjectCode: string;
  readonly technicianCode: string;
  readonly visitCode: string;
  readonly timepointCode: string;
  readonly bronchodilator: 'pre' | 'post';
}

/** The part of a read a query needs: whose it is, and its blinded code. */
export interface ReadRef {
  readonly id: string;
  readonly studyId: string;
  readonly sessionId: string;
  readonly readerId: string;
  readonly blindCode: string;
  readonly status: 'in-progress' | 'withdrawn' | 'signed';
}

/** What a data lock covers: the study, or one site, subject, visit or session of it. */
export interface LockScopeRef {
  readonly studyId: string;
  readonly scope: 'study' | 'site' | 'subject' | 'visit' | 'session';
  /** Id of the site, subject, visit or session; ignored for a study lock. */
  readonly scopeId: string;
}

/** Queries to sites and their message threads. */
export class QueryRepository {
  constructor(private readonly db: TidemarkDatabase) {}

  insertQuery(row: QueryRow): void {
    this.db.insert(queries).values(row).run();
  }

  updateQuery(queryId: string, changes: Partial<QueryRow>): void {
    this.db.update(queries).set(changes).where(eq(queries.id, queryId)).run();
  }

  insertMessage(row: QueryMessageRow): void {
    this.db.insert(queryMessages).values(row).run();
  }

  findQuery(studyId: string, queryId: string): QueryWithCodes | undefined {
    return this.withCodes(and(eq(queries.studyId, studyId), eq(queries.id, queryId)))[0];
  }

  ofSession(studyId: string, sessionId: string): QueryWithCodes[] {
    return this.withCodes(and(eq(queries.studyId, studyId), eq(queries.sessionId, sessionId)));
  }

  ofRead(studyId: string, readId: string): QueryWithCodes[] {
    return this.withCodes(and(eq(queries.studyId, studyId), eq(queries.readId, readId)));
  }

  /** Queries of a study, newest first; optionally only some sites and one status. */
  ofStudy(studyId: string, onlySiteIds: readonly string[] | undefined, status: QueryStatus | undefined): QueryWithCodes[] {
    return this.withCodes(
      and(
        eq(queries.studyId, studyId),
        onlySiteIds ? inArray(queries.siteId, [...onlySiteIds]) : undefined,
        status ? eq(queries.status, status) : undefined,
      ),
    );
  }

  /** Messages of the given queries, oldest first. */
  messagesOf(queryIds: readonly string[]): QueryMessageRow[] {
    if (queryIds.length === 0) return [];
    return this.db
      .select()
      .from(queryMessages)
      .where(inArray(queryMessages.queryId, [...queryIds]))
      .orderBy(asc(queryMessages.createdAt), asc(queryMessages.id))
      .all();
  }

  findRead(studyId: string, readId: string): ReadRef | undefined {
    return this.db
      .select({
        id: reads.id,
        studyId: reads.studyId,
        sessionId: reads.sessionId,
        readerId: reads.readerId,
        blindCode: reads.blindCode,
        status: reads.status,
      })
      .from(reads)
      .where(and(eq(reads.studyId, studyId), eq(reads.id, readId)))
      .get();
  }

  /** Names of users, for the views that may show them. */
  namesOf(userIds: readonly string[]): Map<string, string> {
    if (userIds.length === 0) return new Map();
    const rows = this.db
      .select({ id: users.id, name: users.name })
      .from(users)
      .where(inArray(users.id, [...new Set(userIds)]))
      .all();
    return new Map(rows.map((row) => [row.id, row.name]));
  }

  /** How many queries inside a lock's scope are not closed (open or answered). */
  countUnclosed(scope: LockScopeRef): number {
    const within: Record<LockScopeRef['scope'], SQL | undefined> = {
      study: undefined,
      site: eq(testSessions.siteId, scope.scopeId),
      subject: eq(testSessions.subjectId, scope.scopeId),
      visit: eq(testSessions.visitId, scope.scopeId),
      session: eq(testSessions.id, scope.scopeId),
    };
    return (
      this.db
        .select({ value: count() })
        .from(queries)
        .innerJoin(testSessions, eq(testSessions.id, queries.sessionId))
        .where(and(eq(queries.studyId, scope.studyId), ne(queries.status, 'closed'), within[scope.scope]))
        .get()?.value ?? 0
    );
  }

  private withCodes(where: SQL | undefined): QueryWithCodes[] {
    return this.db
      .select({
        query: queries,
        siteNumber: sites.number,
        siteName: sites.name,
        subjectCode: subjects.code,
        technicianCode: testSessions.technicianCode,
        visitCode: visits.code,
        timepointCode: timepoints.code,
        bronchodilator: testSessions.bronchodilator,
      })
      .from(queries)
      .innerJoin(testSessions, eq(testSessions.id, queries.sessionId))
      .innerJoin(sites, eq(sites.id, queries.siteId))
      .innerJoin(subjects, eq(subjects.id, testSessions.subjectId))
      .innerJoin(visits, eq(visits.id, testSessions.visitId))
      .innerJoin(timepoints, eq(timepoints.id, testSessions.timepointId))
      .where(where)
      .orderBy(desc(queries.openedAt), desc(queries.id))
      .all();
  }
}
