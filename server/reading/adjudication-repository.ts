import { and, asc, eq, inArray } from 'drizzle-orm';
import type { TidemarkDatabase } from '../db/database.js';
import { reads, readVerdicts, testSessions, timepoints, users, visits } from '../db/schema.js';
import { pickFinalRead } from './read-comparison.js';

export type DualReadRow = typeof reads.$inferSelect;
export type DualVerdictRow = typeof readVerdicts.$inferSelect;
type SessionRow = typeof testSessions.$inferSelect;

/** A session waiting for adjudication, with the codes the blinding may show. */
export interface AdjudicationCandidate {
  readonly session: SessionRow;
  readonly visitCode: string;
  readonly timepointCode: string;
}

/** Reads of dual-read sessions: comparison, adjudication, final read and reader agreement. */
export class AdjudicationRepository {
  constructor(private readonly db: TidemarkDatabase) {}

  findRead(readId: string): DualReadRow | undefined {
    return this.db.select().from(reads).where(eq(reads.id, readId)).get();
  }

  findSession(sessionId: string): SessionRow | undefined {
    return this.db.select().from(testSessions).where(eq(testSessions.id, sessionId)).get();
  }

  /** Every read of a session, withdrawn ones included, in the order they were claimed. */
  readsOfSession(sessionId: string): DualReadRow[] {
    return this.db.select().from(reads).where(eq(reads.sessionId, sessionId)).orderBy(asc(reads.claimedAt), asc(reads.id)).all();
  }

  verdictsOf(readId: string): DualVerdictRow[] {
    return this.db.select().from(readVerdicts).where(eq(readVerdicts.readId, readId)).orderBy(asc(readVerdicts.effortIndex)).all();
  }

  /** Verdicts of many reads, grouped by read id. */
  verdictsOfReads(readIds: readonly string[]): Map<string, DualVerdictRow[]> {
    const grouped = new Map<string, DualVerdictRow[]>(readIds.map((id) => [id, []]));
    if (readIds.length === 0) return grouped;
    const rows = this.db
      .select()
      .from(readVerdicts)
      .where(inArray(readVerdicts.readId, [...readIds]))
      .orderBy(asc(readVerdicts.readId), asc(readVerdicts.effortIndex))
      .all();
    for (const row of rows) grouped.get(row.readId)?.push(row);
    return grouped;
  }

  updateSession(sessionId: string, changes: Pick<Partial<SessionRow>, 'status' | 'feedbackReleasedAt' | 'updatedAt'>): void {
    this.db.update(testSessions).set(changes).where(eq(testSessions.id, sessionId)).run();
  }

  /** The final read of a session ({@link pickFinalRead}), or undefined while the session is not final. */
  finalReadOf(sessionId: string): DualReadRow | undefined {
    const session = this.findSession(sessionId);
    if (session?.status !== 'final') return undefined;
    return pickFinalRead(this.readsOfSession(sessionId));
  }

  /** Sessions of the study whose two reads disagree, oldest first. */
  sessionsInAdjudication(studyId: string): AdjudicationCandidate[] {
    return this.db
      .select({ session: testSessions, visitCode: visits.code, timepointCode: timepoints.code })
      .from(testSessions)
      .innerJoin(visits, eq(visits.id, testSessions.visitId))
      .innerJoin(timepoints, eq(timepoints.id, testSessions.timepointId))
      .where(and(eq(testSessions.studyId, studyId), eq(testSessions.status, 'adjudication')))
      .orderBy(asc(testSessions.updatedAt), asc(testSessions.id))
      .all();
  }

  /** Reads of the given sessions, grouped by session id, each group in claim order. */
  readsOfSessions(sessionIds: readonly string[]): Map<string, DualReadRow[]> {
    const grouped = new Map<string, DualReadRow[]>(sessionIds.map((id) => [id, []]));
    if (sessionIds.length === 0) return grouped;
    const rows = this.db
      .select()
      .from(reads)
      .where(inArray(reads.sessionId, [...sessionIds]))
      .orderBy(asc(reads.claimedAt), asc(reads.id))
      .all();
    for (const row of rows) grouped.get(row.sessionId)?.push(row);
    return grouped;
  }

  /** Signed first and second reads of a study, in claim order: the raw material of reader agreement. */
  signedDualReads(studyId: string): DualReadRow[] {
    return this.db
      .select()
      .from(reads)
      .where(and(eq(reads.studyId, studyId), eq(reads.status, 'signed'), inArray(reads.kind, ['first', 'second'])))
      .orderBy(asc(reads.claimedAt), asc(reads.id))
      .all();
  }

  /** Display names of users by id. */
  userNames(userIds: readonly string[]): Map<string, string> {
    if (userIds.length === 0) return new Map();
    const rows = this.db
      .select({ id: users.id, name: users.name })
      .from(users)
      .where(inArray(users.id, [...new Set(userIds)]))
      .all();
    return new Map(rows.map((row) => [row.id, row.name]));
  }

  insertRead(row: DualReadRow): void {
    this.db.insert(reads).values(row).run();
  }

  insertVerdicts(rows: readonly DualVerdictRow[]): void {
    if (rows.length > 0) this.db.insert(readVerdicts).values([...rows]).run();
  }
}
