import { and, asc, count, eq, inArray, max, ne, sql } from 'drizzle-orm';
import type { TidemarkDatabase } from '../db/database.js';
import { calibrationChecks, efforts, queries, reads, readVerdicts, sites, testSessions, uploads, users } from '../db/schema.js';

/** A session as the dashboards need it: where it stands, its engine grades and its turnaround ends. */
export interface PerformanceSessionRow {
  readonly id: string;
  readonly siteId: string;
  readonly status: string;
  readonly fev1Grade: string | null;
  readonly fvcGrade: string | null;
  readonly feedbackReleasedAt: string | null;
  /** When the session's current file arrived; null before a checked file. */
  readonly currentFileReceivedAt: string | null;
}

/** A signed read. */
export interface PerformanceReadRow {
  readonly id: string;
  readonly sessionId: string;
  readonly uploadId: string;
  readonly readerId: string;
  readonly kind: 'first' | 'second' | 'adjudication';
  readonly claimedAt: string;
  readonly signedAt: string | null;
  readonly resultJson: string | null;
}

/** A reader's verdicts on one effort beside the engine's suggestions. */
export interface PerformanceVerdictRow {
  readonly readId: string;
  readonly effortIndex: number;
  readonly fev1Verdict: string;
  readonly fvcVerdict: string;
  readonly suggestedFev1Verdict: string;
  readonly suggestedFvcVerdict: string;
}

/** Read-only aggregates of a study for the site and reader performance dashboards. */
export class PerformanceRepository {
  constructor(private readonly db: TidemarkDatabase) {}

  sitesOf(studyId: string): { id: string; number: string; name: string }[] {
    return this.db
      .select({ id: sites.id, number: sites.number, name: sites.name })
      .from(sites)
      .where(eq(sites.studyId, studyId))
      .orderBy(asc(sites.number))
      .all();
  }

  sessionsOf(studyId: string): PerformanceSessionRow[] {
    return this.db
      .select({
        id: testSessions.id,
        siteId: testSessions.siteId,
        status: testSessions.status,
        fev1Grade: testSessions.fev1Grade,
        fvcGrade: testSessions.fvcGrade,
        feedbackReleasedAt: testSessions.feedbackReleasedAt,
        currentFileReceivedAt: uploads.receivedAt,
      })
      .from(testSessions)
      .leftJoin(uploads, eq(uploads.id, testSessions.currentUploadId))
      .where(eq(testSessions.studyId, studyId))
      .all();
  }

  /** Files received per site and outcome. */
  uploadOutcomes(studyId: string): { siteId: string; outcome: 'checked' | 'rejected'; files: number }[] {
    return this.db
      .select({ siteId: testSessions.siteId, outcome: uploads.outcome, files: count() })
      .from(uploads)
      .innerJoin(testSessions, eq(testSessions.id, uploads.sessionId))
      .where(eq(uploads.studyId, studyId))
      .groupBy(testSessions.siteId, uploads.outcome)
      .all();
  }

  /** The engine's suggested verdicts on the efforts of each session's current file, counted per site. */
  engineVerdicts(studyId: string): { siteId: string; fev1Verdict: string; fvcVerdict: string; efforts: number }[] {
    return this.db
      .select({
        siteId: testSessions.siteId,
        fev1Verdict: efforts.suggestedFev1Verdict,
        fvcVerdict: efforts.suggestedFvcVerdict,
        efforts: count(),
      })
      .from(efforts)
      .innerJoin(testSessions, eq(testSessions.currentUploadId, efforts.uploadId))
      .where(eq(testSessions.studyId, studyId))
      .groupBy(testSessions.siteId, efforts.suggestedFev1Verdict, efforts.suggestedFvcVerdict)
      .all();
  }

  signedReads(studyId: string): PerformanceReadRow[] {
    return this.db
      .select({
        id: reads.id,
        sessionId: reads.sessionId,
        uploadId: reads.uploadId,
        readerId: reads.readerId,
        kind: reads.kind,
        claimedAt: reads.claimedAt,
        signedAt: reads.signedAt,
        resultJson: reads.resultJson,
      })
      .from(reads)
      .where(and(eq(reads.studyId, studyId), eq(reads.status, 'signed')))
      .orderBy(asc(reads.signedAt), asc(reads.id))
      .all();
  }

  /** Verdicts of every signed read of the study. */
  signedVerdicts(studyId: string): PerformanceVerdictRow[] {
    return this.db
      .select({
        readId: readVerdicts.readId,
        effortIndex: readVerdicts.effortIndex,
        fev1Verdict: readVerdicts.fev1Verdict,
        fvcVerdict: readVerdicts.fvcVerdict,
        suggestedFev1Verdict: readVerdicts.suggestedFev1Verdict,
        suggestedFvcVerdict: readVerdicts.suggestedFvcVerdict,
      })
      .from(readVerdicts)
      .innerJoin(reads, eq(reads.id, readVerdicts.readId))
      .where(and(eq(reads.studyId, studyId), eq(reads.status, 'signed')))
      .orderBy(asc(readVerdicts.readId), asc(readVerdicts.effortIndex))
      .all();
  }

  /** Reads under way per reader. */
  readsInProgress(studyId: string): { readerId: string; reads: number }[] {
    return this.db
      .select({ readerId: reads.readerId, reads: count() })
      .from(reads)
      .where(and(eq(reads.studyId, studyId), eq(reads.status, 'in-progress')))
      .groupBy(reads.readerId)
      .all();
  }

  /** Queries not closed yet (open or answered). */
  unclosedQueries(studyId: string): { siteId: string; openedAt: string }[] {
    return this.db
      .select({ siteId: queries.siteId, openedAt: queries.openedAt })
      .from(queries)
      .where(and(eq(queries.studyId, studyId), ne(queries.status, 'closed')))
      .all();
  }

  /** Calibration checks per site: how many, how many within tolerance, and the latest. */
  calibrationBySite(studyId: string): { siteId: string; checks: number; withinTolerance: number; lastCheckedAt: string | null }[] {
    return this.db
      .select({
        siteId: calibrationChecks.siteId,
        checks: count(),
        withinTolerance: sql<number>`coalesce(sum(${calibrationChecks.withinTolerance}), 0)`.mapWith(Number),
        lastCheckedAt: max(calibrationChecks.checkedAt),
      })
      .from(calibrationChecks)
      .where(eq(calibrationChecks.studyId, studyId))
      .groupBy(calibrationChecks.siteId)
      .all();
  }

  userNames(userIds: readonly string[]): Map<string, string> {
    if (userIds.length === 0) return new Map();
    const rows = this.db
      .select({ id: users.id, name: users.name })
      .from(users)
      .where(inArray(users.id, [...new Set(userIds)]))
      .all();
    return new Map(rows.map((row) => [row.id, row.name]));
  }
}
