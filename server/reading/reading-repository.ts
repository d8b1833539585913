import { and, asc, desc, eq, inArray, isNotNull, ne } from 'drizzle-orm';
import type { TidemarkDatabase } from '../db/database.js';
import { efforts, reads, readVerdicts, testSessions, timepoints, uploads, visits } from '../db/schema.js';

export type ReadRow = typeof reads.$inferSelect;
export type ReadVerdictRow = typeof readVerdicts.$inferSelect;

/** A session that may wait for a read, with what the queue shows of it and when its file was checked. */
export interface QueueCandidateRow {
  readonly session: typeof testSessions.$inferSelect;
  readonly visitCode: string;
  readonly timepointCode: string;
  /** When the current file passed the checks: the turnaround clock starts here. */
  readonly checkedAt: string;
  readonly effortCount: number;
}

/** Reads (over-reads) and their verdicts. */
export class ReadingRepository {
  constructor(private readonly db: TidemarkDatabase) {}

  /** Sessions of a study in the given statuses that have a checked file. */
  candidateSessions(studyId: string, statuses: readonly string[]): QueueCandidateRow[] {
    return this.db
      .select({
        session: testSessions,
        visitCode: visits.code,
        timepointCode: timepoints.code,
        checkedAt: uploads.processedAt,
        effortCount: this.db.$count(efforts, eq(efforts.uploadId, testSessions.currentUploadId)),
      })
      .from(testSessions)
      .innerJoin(uploads, eq(uploads.id, testSessions.currentUploadId))
      .innerJoin(visits, eq(visits.id, testSessions.visitId))
      .innerJoin(timepoints, eq(timepoints.id, testSessions.timepointId))
      .where(and(eq(testSessions.studyId, studyId), inArray(testSessions.status, [...statuses]), isNotNull(testSessions.currentUploadId)))
      .all();
  }

  /** Reads of a study that still count (in progress or signed). */
  liveReadsOfStudy(studyId: string): ReadRow[] {
    return this.db
      .select()
      .from(reads)
      .where(and(eq(reads.studyId, studyId), ne(reads.status, 'withdrawn')))
      .all();
  }

  /** Every read of a session, withdrawn ones too, oldest first. */
  readsOfSession(sessionId: string): ReadRow[] {
    return this.db.select().from(reads).where(eq(reads.sessionId, sessionId)).orderBy(asc(reads.claimedAt), asc(reads.id)).all();
  }

  readsOfReader(studyId: string, readerId: string): ReadRow[] {
    return this.db
      .select()
      .from(reads)
      .where(and(eq(reads.studyId, studyId), eq(reads.readerId, readerId)))
      .orderBy(desc(reads.claimedAt), desc(reads.id))
      .all();
  }

  findRead(readId: string): ReadRow | undefined {
    return this.db.select().from(reads).where(eq(reads.id, readId)).get();
  }

  findReadByBlindCode(blindCode: string): ReadRow | undefined {
    return this.db.select().from(reads).where(eq(reads.blindCode, blindCode)).get();
  }

  insertRead(row: typeof reads.$inferInsert): void {
    this.db.insert(reads).values(row).run();
  }

  /** Updates a read only if it is still at the expected version; false when someone saved in between. */
  updateReadAtVersion(readId: string, expectedVersion: number, changes: Partial<typeof reads.$inferInsert>): boolean {
    const result = this.db
      .update(reads)
      .set(changes)
      .where(and(eq(reads.id, readId), eq(reads.version, expectedVersion)))
      .run();
    return result.changes > 0;
  }

  verdictsOf(readId: string): ReadVerdictRow[] {
    return this.db.select().from(readVerdicts).where(eq(readVerdicts.readId, readId)).orderBy(asc(readVerdicts.effortIndex)).all();
  }

  insertVerdicts(rows: ReadVerdictRow[]): void {
    if (rows.length > 0) this.db.insert(readVerdicts).values(rows).run();
  }

  updateVerdict(
    readId: string,
    effortIndex: number,
    changes: Pick<ReadVerdictRow, 'fev1Verdict' | 'fvcVerdict' | 'findingsJson' | 'comment'>,
  ): void {
    this.db
      .update(readVerdicts)
      .set(changes)
      .where(and(eq(readVerdicts.readId, readId), eq(readVerdicts.effortIndex, effortIndex)))
      .run();
  }
}
