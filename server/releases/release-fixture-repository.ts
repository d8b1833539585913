import { eq, getTableColumns } from 'drizzle-orm';
import type { SQLiteTable } from 'drizzle-orm/sqlite-core';
import type { TidemarkDatabase } from '../db/database.js';
import {
  dataLocks,
  efforts,
  reads,
  readVerdicts,
  signatures,
  sites,
  studies,
  subjects,
  testSessions,
  timepoints,
  uploads,
  visits,
} from '../db/schema.js';

/** Rows of locked, finally read study data, in the order foreign keys need them. */
export interface FixtureRows {
  readonly studies?: (typeof studies.$inferInsert)[];
  readonly sites?: (typeof sites.$inferInsert)[];
  readonly visits?: (typeof visits.$inferInsert)[];
  readonly timepoints?: (typeof timepoints.$inferInsert)[];
  readonly subjects?: (typeof subjects.$inferInsert)[];
  readonly sessions?: (typeof testSessions.$inferInsert)[];
  readonly uploads?: (typeof uploads.$inferInsert)[];
  readonly efforts?: (typeof efforts.$inferInsert)[];
  readonly signatures?: (typeof signatures.$inferInsert)[];
  readonly reads?: (typeof reads.$inferInsert)[];
  readonly verdicts?: (typeof readVerdicts.$inferInsert)[];
  readonly locks?: (typeof dataLocks.$inferInsert)[];
}

/** SQLite's limit on bound values per statement, with room to spare. */
const MAX_BOUND_VALUES = 30_000;

/**
 * Test and benchmark support only: writes study data straight to the database (no audit rows),
 * for releases of data whose reading and locking are not what a test is about. The app never
 * calls it.
 */
export class ReleaseFixtureRepository {
  constructor(private readonly db: TidemarkDatabase) {}

  /** Inserts every row in one transaction. */
  insert(rows: FixtureRows): void {
    this.db.$client.transaction(() => {
      this.insertAll(studies, rows.studies);
      this.insertAll(sites, rows.sites);
      this.insertAll(visits, rows.visits);
      this.insertAll(timepoints, rows.timepoints);
      this.insertAll(subjects, rows.subjects);
      this.insertAll(testSessions, rows.sessions);
      this.insertAll(uploads, rows.uploads);
      this.insertAll(efforts, rows.efforts);
      this.insertAll(signatures, rows.signatures);
      this.insertAll(reads, rows.reads);
      this.insertAll(readVerdicts, rows.verdicts);
      this.insertAll(dataLocks, rows.locks);
    })();
  }

  /** Marks a session final (its read is signed) at the given time. */
  markFinal(sessionId: string, at: string): void {
    this.db.update(testSessions).set({ status: 'final', updatedAt: at }).where(eq(testSessions.id, sessionId)).run();
  }

  private insertAll<T extends SQLiteTable>(table: T, rows: readonly T['$inferInsert'][] | undefined): void {
    if (!rows?.length) return;
    const perStatement = Math.max(1, Math.floor(MAX_BOUND_VALUES / Object.keys(getTableColumns(table)).length));
    for (let start = 0; start < rows.length; start += perStatement) {
      this.db
        .insert(table)
        .values(rows.slice(start, start + perStatement) as T['$inferInsert'][])
        .run();
    }
  }
}
