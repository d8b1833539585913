import { and, eq, isNull, lt } from 'drizzle-orm';
import type { TidemarkDatabase } from '../db/database.js';
import { apiTokens, authSessions, loginAttempts } from '../db/schema.js';

export type AuthSessionRow = typeof authSessions.$inferSelect;
export type ApiTokenRow = typeof apiTokens.$inferSelect;
export type LoginAttemptRow = typeof loginAttempts.$inferSelect;

/** Storage of sessions, sign-ins in flight and API tokens. */
export class AuthRepository {
  constructor(private readonly db: TidemarkDatabase) {}

  insertLoginAttempt(row: typeof loginAttempts.$inferInsert): void {
    this.db.insert(loginAttempts).values(row).run();
  }

  /** Returns and deletes the attempt, so a state value works once only. */
  takeLoginAttempt(state: string): LoginAttemptRow | undefined {
    return this.db.delete(loginAttempts).where(eq(loginAttempts.state, state)).returning().get();
  }

  deleteLoginAttemptsBefore(isoTime: string): void {
    this.db.delete(loginAttempts).where(lt(loginAttempts.createdAt, isoTime)).run();
  }

  insertSession(row: typeof authSessions.$inferInsert): void {
    this.db.insert(authSessions).values(row).run();
  }

  findOpenSession(idHash: string): AuthSessionRow | undefined {
    return this.db
      .select()
      .from(authSessions)
      .where(and(eq(authSessions.idHash, idHash), isNull(authSessions.endedAt)))
      .get();
  }

  touchSession(idHash: string, lastSeenAt: string): void {
    this.db.update(authSessions).set({ lastSeenAt }).where(eq(authSessions.idHash, idHash)).run();
  }

  /** Records a fresh password entry at the identity provider for an open session. */
  updateAuthTime(idHash: string, authTime: string): void {
    this.db.update(authSessions).set({ authTime }).where(and(eq(authSessions.idHash, idHash), isNull(authSessions.endedAt))).run();
  }

  endSession(idHash: string, endedAt: string): void {
    this.db.update(authSessions).set({ endedAt }).where(eq(authSessions.idHash, idHash)).run();
  }

  insertToken(row: typeof apiTokens.$inferInsert): void {
    this.db.insert(apiTokens).values(row).run();
  }

  findTokenByHash(tokenHash: string): ApiTokenRow | undefined {
    return this.db.select().from(apiTokens).where(eq(apiTokens.tokenHash, tokenHash)).get();
  }

  listTokens(userId: string): ApiTokenRow[] {
    return this.db.select().from(apiTokens).where(eq(apiTokens.userId, userId)).orderBy(apiTokens.createdAt).all();
  }

  markTokenUsed(id: string, at: string): void {
    this.db.update(apiTokens).set({ lastUsedAt: at }).where(eq(apiTokens.id, id)).run();
  }

  revokeToken(id: string, userId: string, at: string): boolean {
    const result = this.db
      .update(apiTokens)
      .set({ revokedAt: at })
      .where(and(eq(apiTokens.id, id), eq(apiTokens.userId, userId), isNull(apiTokens.revokedAt)))
      .run();
    return result.changes > 0;
  }
}
