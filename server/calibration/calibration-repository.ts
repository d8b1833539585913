import { and, desc, eq, inArray } from 'drizzle-orm';
import type { TidemarkDatabase } from '../db/database.js';
import { calibrationChecks } from '../db/schema.js';

export type CalibrationCheckRow = typeof calibrationChecks.$inferSelect;

/** Syringe checks of site spirometers. */
export class CalibrationRepository {
  constructor(private readonly db: TidemarkDatabase) {}

  insert(row: CalibrationCheckRow): void {
    this.db.insert(calibrationChecks).values(row).run();
  }

  /** Newest first, for a study or only some of its sites. */
  listFor(studyId: string, siteIds: readonly string[] | undefined, limit: number): CalibrationCheckRow[] {
    return this.db
      .select()
      .from(calibrationChecks)
      .where(and(eq(calibrationChecks.studyId, studyId), siteIds ? inArray(calibrationChecks.siteId, [...siteIds]) : undefined))
      .orderBy(desc(calibrationChecks.checkedAt))
      .limit(limit)
      .all();
  }
}
