import { eq } from 'drizzle-orm';
import type { RoleAssignment } from '../../shared/contracts/auth.js';
import { roleSchema } from '../../shared/contracts/auth.js';
import type { TidemarkDatabase } from '../db/database.js';
import { roleAssignments, studies, users } from '../db/schema.js';

export type UserRow = typeof users.$inferSelect;

/** Reads of users and their role assignments. */
export class UserRepository {
  constructor(private readonly db: TidemarkDatabase) {}

  findByEmail(email: string): UserRow | undefined {
    return this.db.select().from(users).where(eq(users.email, email.toLowerCase())).get();
  }

  findById(id: string): UserRow | undefined {
    return this.db.select().from(users).where(eq(users.id, id)).get();
  }

  /** Assignments grouped per study and role; site rows of one role collapse into `siteIds`. */
  assignmentsOf(userId: string): RoleAssignment[] {
    const rows = this.db
      .select({
        studyId: roleAssignments.studyId,
        studyCode: studies.code,
        role: roleAssignments.role,
        siteId: roleAssignments.siteId,
      })
      .from(roleAssignments)
      .innerJoin(studies, eq(studies.id, roleAssignments.studyId))
      .where(eq(roleAssignments.userId, userId))
      .orderBy(studies.code, roleAssignments.role)
      .all();
    const grouped = new Map<string, RoleAssignment & { siteIds: string[] | null }>();
    for (const row of rows) {
      const key = `${row.studyId}|${row.role}`;
      const existing = grouped.get(key);
      const role = roleSchema.parse(row.role);
      if (!existing) {
        grouped.set(key, {
          studyId: row.studyId,
          studyCode: row.studyCode,
          role,
          siteIds: row.siteId === null ? null : [row.siteId],
        });
      } else if (existing.siteIds !== null) {
        // A study-wide row for the same role widens the scope to the whole study.
        existing.siteIds = row.siteId === null ? null : [...existing.siteIds, row.siteId];
      }
    }
    return [...grouped.values()];
  }

}
