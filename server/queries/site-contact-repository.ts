import { and, eq, isNull, or } from 'drizzle-orm';
import type { TidemarkDatabase } from '../db/database.js';
import { roleAssignments, users } from '../db/schema.js';

/** Who to tell at a site: its coordinators (queries, feedback). */
export class SiteContactRepository {
  constructor(private readonly db: TidemarkDatabase) {}

  /** Active users holding the site-coordinator role for this site (or the whole study), each once. */
  coordinatorIdsOf(studyId: string, siteId: string): string[] {
    const rows = this.db
      .selectDistinct({ userId: roleAssignments.userId })
      .from(roleAssignments)
      .innerJoin(users, eq(users.id, roleAssignments.userId))
      .where(
        and(
          eq(roleAssignments.studyId, studyId),
          eq(roleAssignments.role, 'site-coordinator'),
          or(eq(roleAssignments.siteId, siteId), isNull(roleAssignments.siteId)),
          eq(users.active, true),
        ),
      )
      .orderBy(roleAssignments.userId)
      .all();
    return rows.map((row) => row.userId);
  }
}
