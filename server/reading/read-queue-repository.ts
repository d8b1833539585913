import { aliasedTable, and, asc, count, eq, inArray, isNotNull, isNull, lt, not, notExists, notInArray, sql, type SQL } from 'drizzle-orm';
import { union, type AnySQLiteColumn } from 'drizzle-orm/sqlite-core';
import type { TidemarkDatabase } from '../db/database.js';
import { dataLocks, efforts, reads, testSessions, timepoints, uploads, visits } from '../db/schema.js';
import { AWAITING_READ_STATUSES } from './read-queue-rules.js';

/** A session open to the reader, as the queue lists it. */
export interface OpenSessionRow {
  readonly sessionId: string;
  readonly bronchodilator: 'pre' | 'post';
  readonly visitCode: string;
  readonly timepointCode: string;
  /** When the current file passed the checks: the turnaround clock starts here. */
  readonly checkedAt: string;
  readonly effortCount: number;
  /** First and second reads in progress or signed: 0 makes the reader's read the first, 1 the second. */
  readonly liveOverReadCount: number;
}

/** The top of a reader's queue and how many sessions are open to them in all. */
export interface OpenSessionsPage {
  readonly rows: readonly OpenSessionRow[];
  readonly total: number;
}

/** Where the queue changes plans (see {@link ReadQueueRepository}). */
export interface QueuePlanLimits {
  /** Up to this many sessions awaiting a read, all are filtered and sorted (a few microseconds each). */
  readonly smallBacklog: number;
  /** How many of the study's oldest files, per page item, a larger backlog's first look covers. */
  readonly filesPerPageItem: number;
}

/** The limits the app runs with; tests move them to take either plan on small data. */
export const QUEUE_PLAN_LIMITS: QueuePlanLimits = { smallBacklog: 5000, filesPerPageItem: 10 };

/** What the queries are run with (a type, not an interface, so that it passes as placeholder values). */
type QueueParameters = { readonly studyId: string; readonly readerId: string };

const STUDY_ID = sql.placeholder('studyId');
const READER_ID = sql.placeholder('readerId');
const LIMIT = sql.placeholder('limit');

/**
 * The reading queue in SQL: which sessions a reader may claim, oldest due first.
 *
 * The conditions are those of read-queue-rules.ts and lock-scope.ts, written as SQL so that the
 * database filters, sorts and pages, and the server never loads a study's sessions:
 * - the session awaits a read (checked or in reading) and has a checked file;
 * - the reader holds no live first or second read of it (live: in progress or signed);
 * - it has fewer live reads than it needs: one, or two when the session is read twice. With no live
 *   read yet the need is at least one whatever the dual-read draw decides, so the draw (a hash the
 *   database cannot compute) never matters here;
 * - no active lock covers it (study, site, subject, visit or session scope).
 * Due time is the check time plus the study's turnaround, one figure per study, so check time
 * (uploads.processed_at, always an ISO-8601 UTC string) orders the queue, ties by session id.
 *
 * The backlog (sessions awaiting a read) is counted from an index alone. Up to
 * {@link QueuePlanLimits.smallBacklog} sessions, all of it is filtered and sorted. A larger backlog
 * is mostly the oldest files of the study, so the page is first looked for among them (a bounded
 * walk of uploads_study_processed), and the total is the backlog less the sessions in it that are
 * closed to the reader, found from the other side: the study's live reads and its active locks.
 * When those files do not fill the page, the whole backlog is filtered and sorted after all.
 * All of it reads one snapshot of the database. The statements are prepared once: building and
 * preparing them would cost about as much as running them.
 */
export class ReadQueueRepository {
  private readonly statements;

  constructor(
    private readonly db: TidemarkDatabase,
    private readonly limits: QueuePlanLimits = QUEUE_PLAN_LIMITS,
  ) {
    this.statements = prepareStatements(db);
  }

  /** The `limit` oldest-due sessions open to the reader, and how many are open in all. */
  openSessions(studyId: string, readerId: string, limit: number): OpenSessionsPage {
    const parameters: QueueParameters = { studyId, readerId };
    return this.db.transaction(() => {
      // A study lock covers every session: nothing to look for.
      if (this.statements.studyLocked.get(parameters)) return { rows: [], total: 0 };
      const backlog = this.statements.backlog.get(parameters)?.backlog ?? 0;
      if (backlog === 0) return { rows: [], total: 0 };
      if (backlog > this.limits.smallBacklog) {
        const page = this.statements.pageAmongOldestFiles.all({ ...parameters, limit, files: limit * this.limits.filesPerPageItem });
        if (page.length === limit) {
          return { rows: this.withDetails(page), total: backlog - (this.statements.closedToReader.get(parameters)?.closed ?? 0) };
        }
      }
      const page = this.statements.wholeBacklogPage.all({ ...parameters, limit });
      return { rows: this.withDetails(page), total: page[0]?.total ?? 0 };
    });
  }

  /**
   * Sessions a queue token may name: those in the statuses given with a checked file, ids only, so
   * that the token can be recomputed for each.
   */
  tokenCandidates(studyId: string, statuses: readonly string[]): string[] {
    return this.db
      .select({ id: testSessions.id })
      .from(testSessions)
      .where(and(eq(testSessions.studyId, studyId), inArray(testSessions.status, [...statuses]), isNotNull(testSessions.currentUploadId)))
      .all()
      .map((row) => row.id);
  }

  /** When the session's current file passed the checks; undefined without a checked file. */
  checkedAt(sessionId: string): string | undefined {
    return this.db
      .select({ checkedAt: uploads.processedAt })
      .from(testSessions)
      .innerJoin(uploads, eq(uploads.id, testSessions.currentUploadId))
      .where(eq(testSessions.id, sessionId))
      .get()?.checkedAt;
  }

  /** What the queue shows of each session of the page, in page order. */
  private withDetails(page: readonly { sessionId: string; liveOverReadCount: number }[]): OpenSessionRow[] {
    if (page.length === 0) return [];
    const details = this.statements.details.all({ sessionIds: JSON.stringify(page.map((row) => row.sessionId)) });
    const bySession = new Map(details.map((row) => [row.sessionId, row]));
    return page.map(({ sessionId, liveOverReadCount }) => ({ ...bySession.get(sessionId)!, liveOverReadCount }));
  }
}

/** The queue's statements, prepared on the database. */
function prepareStatements(db: TidemarkDatabase) {
  const open = and(awaitingRead(), openToReader(db))!;
  const oldestFiles = db
    .select({ uploadId: uploads.id, sessionId: uploads.sessionId, checkedAt: uploads.processedAt })
    .from(uploads)
    .where(eq(uploads.studyId, STUDY_ID))
    .orderBy(asc(uploads.processedAt), asc(uploads.sessionId))
    .limit(sql.placeholder('files'))
    .as('oldest_files');
  return {
    studyLocked: db.select({ one: sql`1` }).from(dataLocks).where(activeLock('study')).prepare(),
    /** Sessions awaiting a read with a checked file, counted from the test_sessions_status index alone. */
    backlog: db.select({ backlog: count() }).from(testSessions).where(awaitingRead()).prepare(),
    /** Open sessions among the study's oldest files, in due order: when they fill the page, they are the page. */
    pageAmongOldestFiles: db
      .select({ sessionId: testSessions.id, liveOverReadCount: liveOverReadCount(db) })
      .from(oldestFiles)
      // A cross join keeps the files outside: each is looked up in test_sessions by its primary key.
      .crossJoin(testSessions)
      .where(and(eq(testSessions.id, oldestFiles.sessionId), eq(testSessions.currentUploadId, oldestFiles.uploadId), open))
      .orderBy(asc(oldestFiles.checkedAt), asc(oldestFiles.sessionId))
      .limit(LIMIT)
      .prepare(),
    wholeBacklogPage: db
      .select({ sessionId: testSessions.id, liveOverReadCount: liveOverReadCount(db), total: sql<number>`count(*) over ()` })
      .from(testSessions)
      .innerJoin(uploads, eq(uploads.id, testSessions.currentUploadId))
      .where(open)
      .orderBy(asc(uploads.processedAt), asc(testSessions.id))
      .limit(LIMIT)
      .prepare(),
    closedToReader: closedToReader(db),
    details: db
      .select({
        sessionId: testSessions.id,
        bronchodilator: testSessions.bronchodilator,
        visitCode: visits.code,
        timepointCode: timepoints.code,
        checkedAt: uploads.processedAt,
        effortCount: db.$count(efforts, eq(efforts.uploadId, testSessions.currentUploadId)),
      })
      .from(testSessions)
      .innerJoin(uploads, eq(uploads.id, testSessions.currentUploadId))
      .innerJoin(visits, eq(visits.id, testSessions.visitId))
      .innerJoin(timepoints, eq(timepoints.id, testSessions.timepointId))
      // One statement for any page: the ids come as one JSON array.
      .where(sql`${testSessions.id} in (select value from json_each(${sql.placeholder('sessionIds')}))`)
      .prepare(),
  };
}

/**
 * How many sessions of the backlog are not open to the reader, found from the sessions that have
 * a live read or sit under an active lock: only those can be closed to anyone.
 */
function closedToReader(db: TidemarkDatabase) {
  const covered = aliasedTable(testSessions, 'covered');
  // Site, subject and visit ids are unique across studies: each arm uses the index on its own column.
  const underLock = (scope: 'site' | 'subject' | 'visit', covers: SQL) =>
    db.select({ sessionId: covered.id }).from(dataLocks).innerJoin(covered, covers).where(activeLock(scope));
  const candidates = union(
    db.select({ sessionId: reads.sessionId }).from(reads).where(and(eq(reads.studyId, STUDY_ID), LIVE_OVER_READ)),
    underLock('site', and(eq(covered.studyId, dataLocks.studyId), eq(covered.siteId, dataLocks.scopeId))!),
    underLock('subject', eq(covered.subjectId, dataLocks.scopeId)),
    underLock('visit', eq(covered.visitId, dataLocks.scopeId)),
    db.select({ sessionId: dataLocks.scopeId }).from(dataLocks).where(activeLock('session')),
  ).as('candidates');
  return db
    .select({ closed: count() })
    .from(candidates)
    .crossJoin(testSessions)
    .where(and(eq(testSessions.id, candidates.sessionId), awaitingRead(), not(openToReader(db))))
    .prepare();
}

/**
 * A read that counts toward the over-read: first or second, in progress or signed. Literal values,
 * not parameters, so that SQLite can use the partial index reads_live_over_reads.
 */
const LIVE_OVER_READ = sql`${reads.kind} <> 'adjudication' and ${reads.status} <> 'withdrawn'`;

/** The session (test_sessions, unaliased) belongs to the study, awaits a read and has a checked file. */
function awaitingRead(): SQL {
  return and(eq(testSessions.studyId, STUDY_ID), inArray(testSessions.status, [...AWAITING_READ_STATUSES]), isNotNull(testSessions.currentUploadId))!;
}

/** An active lock of the given scope in the study (the study scope covers all, whatever its id). */
function activeLock(scope: 'study' | 'site' | 'subject' | 'visit' | 'session'): SQL {
  return and(eq(dataLocks.studyId, STUDY_ID), eq(dataLocks.scope, scope), isNull(dataLocks.unlockedAt))!;
}

/** Live first and second reads of the session in the enclosing query. */
function liveOverReadsOfSession(): SQL {
  return and(eq(reads.studyId, testSessions.studyId), eq(reads.sessionId, testSessions.id), LIVE_OVER_READ)!;
}

function liveOverReadCount(db: TidemarkDatabase): SQL<number> {
  return sql<number>`(${db.select({ live: count() }).from(reads).where(liveOverReadsOfSession())})`;
}

/**
 * Whether the session in the enclosing query (test_sessions, unaliased), if it awaits a read, is
 * open to the reader: no live read of theirs, fewer live reads than it needs, no active lock on it.
 */
function openToReader(db: TidemarkDatabase): SQL {
  // Uncorrelated lists: SQLite builds each once per query and checks every session against it.
  const lockOn = (scope: 'site' | 'subject' | 'visit' | 'session', scopeId: AnySQLiteColumn) =>
    notInArray(scopeId, db.select({ scopeId: dataLocks.scopeId }).from(dataLocks).where(activeLock(scope)));
  return and(
    notExists(db.select({ one: sql`1` }).from(reads).where(and(liveOverReadsOfSession(), eq(reads.readerId, READER_ID)))),
    lt(liveOverReadCount(db), sql`case when ${testSessions.dualRead} then 2 else 1 end`),
    notExists(db.select({ one: sql`1` }).from(dataLocks).where(activeLock('study'))),
    lockOn('site', testSessions.siteId),
    lockOn('subject', testSessions.subjectId),
    lockOn('visit', testSessions.visitId),
    lockOn('session', testSessions.id),
  )!;
}
