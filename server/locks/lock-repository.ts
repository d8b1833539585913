import { and, asc, desc, eq, inArray, isNull, or } from 'drizzle-orm';
import type { TidemarkDatabase } from '../db/database.js';
import { dataLocks, signatures, sites, studies, subjects, testSessions, timepoints, users, visits } from '../db/schema.js';

export type DataLockRow = typeof dataLocks.$inferSelect;
export type LockSignatureRow = typeof signatures.$inferSelect;

/** Record type of lock signatures in the signatures table. */
export const LOCK_RECORD_TYPE = 'lock';

/** A session with the codes people use to name it. */
export interface SessionNaming {
  readonly id: string;
  readonly siteId: string;
  readonly siteNumber: string;
  readonly subjectCode: string;
  readonly visitCode: string;
  readonly timepointCode: string;
  readonly bronchodilator: string;
}

/** Data locks, what they name, and the signatures attached to them. */
export class LockRepository {
  constructor(private readonly db: TidemarkDatabase) {}

  insert(row: DataLockRow): void {
    this.db.insert(dataLocks).values(row).run();
  }

  /** Records the unlocking; only an active lock changes (a lock is unlocked once). */
  markUnlocked(lockId: string, change: { unlockedBy: string; unlockedAt: string; unlockReason: string }): boolean {
    const result = this.db
      .update(dataLocks)
      .set(change)
      .where(and(eq(dataLocks.id, lockId), isNull(dataLocks.unlockedAt)))
      .run();
    return result.changes === 1;
  }

  find(studyId: string, lockId: string): DataLockRow | undefined {
    return this.db
      .select()
      .from(dataLocks)
      .where(and(eq(dataLocks.studyId, studyId), eq(dataLocks.id, lockId)))
      .get();
  }

  /** Locks of the study, active and past, newest first. */
  ofStudy(studyId: string): DataLockRow[] {
    return this.db.select().from(dataLocks).where(eq(dataLocks.studyId, studyId)).orderBy(desc(dataLocks.lockedAt), desc(dataLocks.id)).all();
  }

  activeOfStudy(studyId: string): DataLockRow[] {
    return this.db
      .select()
      .from(dataLocks)
      .where(and(eq(dataLocks.studyId, studyId), isNull(dataLocks.unlockedAt)))
      .orderBy(asc(dataLocks.lockedAt))
      .all();
  }

  /** Signatures attached to these locks, oldest first. */
  signaturesOf(lockIds: readonly string[]): LockSignatureRow[] {
    if (lockIds.length === 0) return [];
    return this.db
      .select()
      .from(signatures)
      .where(and(eq(signatures.recordType, LOCK_RECORD_TYPE), inArray(signatures.recordId, [...lockIds])))
      .orderBy(asc(signatures.signedAt), asc(signatures.id))
      .all();
  }

  namesOf(userIds: readonly string[]): Map<string, string> {
    if (userIds.length === 0) return new Map();
    const rows = this.db
      .select({ id: users.id, name: users.name })
      .from(users)
      .where(inArray(users.id, [...new Set(userIds)]))
      .all();
    return new Map(rows.map((row) => [row.id, row.name]));
  }

  findStudy(studyId: string) {
    return this.db.select({ id: studies.id, code: studies.code }).from(studies).where(eq(studies.id, studyId)).get();
  }

  /** A site by id or by its number in the study. */
  findSite(studyId: string, idOrNumber: string) {
    return this.db
      .select({ id: sites.id, number: sites.number, name: sites.name })
      .from(sites)
      .where(and(eq(sites.studyId, studyId), or(eq(sites.id, idOrNumber), eq(sites.number, idOrNumber))))
      .get();
  }

  siteNumbers(studyId: string): string[] {
    return this.db
      .select({ number: sites.number })
      .from(sites)
      .where(eq(sites.studyId, studyId))
      .orderBy(asc(sites.number))
      .all()
      .map((row) => row.number);
  }

  /** A subject by code or id, with the number of its site. */
  findSubject(studyId: string, idOrCode: string) {
    return this.db
      .select({ id: subjects.id, code: subjects.code, siteId: subjects.siteId, siteNumber: sites.number })
      .from(subjects)
      .innerJoin(sites, eq(sites.id, subjects.siteId))
      .where(and(eq(subjects.studyId, studyId), or(eq(subjects.id, idOrCode), eq(subjects.code, idOrCode))))
      .get();
  }

  /** A visit of the schedule by code or id. */
  findVisit(studyId: string, idOrCode: string) {
    return this.db
      .select({ id: visits.id, code: visits.code, name: visits.name })
      .from(visits)
      .where(and(eq(visits.studyId, studyId), or(eq(visits.id, idOrCode), eq(visits.code, idOrCode))))
      .get();
  }

  visitCodes(studyId: string): string[] {
    return this.db
      .select({ code: visits.code })
      .from(visits)
      .where(eq(visits.studyId, studyId))
      .orderBy(asc(visits.dayOffset))
      .all()
      .map((row) => row.code);
  }

  findSession(studyId: string, sessionId: string): SessionNaming | undefined {
    return this.db
      .select({
        id: testSessions.id,
        siteId: testSessions.siteId,
        siteNumber: sites.number,
        subjectCode: subjects.code,
        visitCode: visits.code,
        timepointCode: timepoints.code,
        bronchodilator: testSessions.bronchodilator,
      })
      .from(testSessions)
      .innerJoin(sites, eq(sites.id, testSessions.siteId))
      .innerJoin(subjects, eq(subjects.id, testSessions.subjectId))
      .innerJoin(visits, eq(visits.id, testSessions.visitId))
      .innerJoin(timepoints, eq(timepoints.id, testSessions.timepointId))
      .where(and(eq(testSessions.studyId, studyId), eq(testSessions.id, sessionId)))
      .get();
  }
}
