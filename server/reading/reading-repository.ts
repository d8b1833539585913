import { and, asc, desc, eq } from 'drizzle-orm';
import type { TidemarkDatabase } from '../db/database.js';
import { reads, readVerdicts } from '../db/schema.js';
import { ReadQueueRepository } from './read-queue-repository.js';

export type ReadRow = typeof reads.$inferSelect;
export type ReadVerdictRow = typeof readVerdicts.$inferSelect;

/** Reads (over-reads) and their verdicts; the reading queue's queries are in {@link queue}. */
export class ReadingRepository {
  /** The reading queue in SQL, on the same database. */
  readonly queue: ReadQueueRepository;

  constructor(private readonly db: TidemarkDatabase) {
    this.queue = new ReadQueueRepository(db);
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
