import { and, asc, eq, inArray } from 'drizzle-orm';
import type { TidemarkDatabase } from '../db/database.js';
import { sites, studies } from '../db/schema.js';

export type StudyRow = typeof studies.$inferSelect;
export type SiteRow = typeof sites.$inferSelect;

/** Reads of studies and their sites. */
export class StudyRepository {
  constructor(private readonly db: TidemarkDatabase) {}

  findStudies(ids: readonly string[]): StudyRow[] {
    if (ids.length === 0) return [];
    return this.db.select().from(studies).where(inArray(studies.id, [...ids])).orderBy(asc(studies.code)).all();
  }

  findStudy(id: string): StudyRow | undefined {
    return this.db.select().from(studies).where(eq(studies.id, id)).get();
  }

  /** Sites of a study, all of them or only those listed. */
  findSites(studyId: string, onlySiteIds?: readonly string[]): SiteRow[] {
    const scope = onlySiteIds ? inArray(sites.id, [...onlySiteIds]) : undefined;
    return this.db
      .select()
      .from(sites)
      .where(and(eq(sites.studyId, studyId), scope))
      .orderBy(asc(sites.number))
      .all();
  }

  findSite(studyId: string, siteId: string): SiteRow | undefined {
    return this.db
      .select()
      .from(sites)
      .where(and(eq(sites.studyId, studyId), eq(sites.id, siteId)))
      .get();
  }
}
