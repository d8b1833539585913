import type { Logger } from 'pino';
import type { AppServices } from '../app.js';
import { eq } from 'drizzle-orm';
import type { TidemarkDatabase } from '../db/database.js';
import { roleAssignments, sites, studies, users } from '../db/schema.js';
import { DEMO_SITES, DEMO_STUDY, DEMO_USERS } from './demo-study.js';

/** Writes the demo study, its sites, users and role assignments once; a second run changes nothing. */
export function seedDemoStudy(db: TidemarkDatabase): boolean {
  const existing = db.select({ id: studies.id }).from(studies).where(eq(studies.id, DEMO_STUDY.id)).get();
  if (existing) return false;
  db.transaction((tx) => {
    tx.insert(studies).values(DEMO_STUDY).run();
    tx.insert(sites)
      .values(DEMO_SITES.map((site) => ({ ...site, studyId: DEMO_STUDY.id })))
      .run();
    for (const user of DEMO_USERS) {
      tx.insert(users).values({ id: user.id, email: user.email, name: user.name }).onConflictDoNothing().run();
      for (const grant of user.roles) {
        const siteIds = grant.siteIds ?? [null];
        for (const siteId of siteIds) {
          tx.insert(roleAssignments)
            .values({
              id: `${user.id}:${DEMO_STUDY.id}:${grant.role}:${siteId ?? 'all'}`,
              userId: user.id,
              studyId: DEMO_STUDY.id,
              role: grant.role,
              siteId,
            })
            .run();
        }
      }
    }
  });
  return true;
}

/** Uploads the demo sessions through the real pipeline once (filled in with the demo scenario). */
export async function seedDemoSessions(_services: AppServices, _logger: Logger): Promise<void> {}
