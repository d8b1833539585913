import { asc, desc, eq } from 'drizzle-orm';
import type { TidemarkDatabase } from '../db/database.js';
import { userMessages } from '../db/schema.js';

export type UserMessageRow = typeof userMessages.$inferSelect;

/** Messages to users, kept so the app can list them beside the e-mail. */
export class MessageRepository {
  constructor(private readonly db: TidemarkDatabase) {}

  insert(row: UserMessageRow): void {
    this.db.insert(userMessages).values(row).run();
  }

  markDelivery(id: string, delivery: 'sent' | 'failed', failure: string | null): void {
    this.db.update(userMessages).set({ delivery, failure }).where(eq(userMessages.id, id)).run();
  }

  /** Messages written but never sent (the process stopped between commit and delivery), oldest first. */
  pending(): UserMessageRow[] {
    return this.db.select().from(userMessages).where(eq(userMessages.delivery, 'pending')).orderBy(asc(userMessages.createdAt)).all();
  }

  latestFor(userId: string, limit: number): UserMessageRow[] {
    return this.db
      .select()
      .from(userMessages)
      .where(eq(userMessages.userId, userId))
      .orderBy(desc(userMessages.createdAt))
      .limit(limit)
      .all();
  }
}
