import { and, asc, eq } from 'drizzle-orm';
import type { TidemarkDatabase } from '../db/database.js';
import { reads, readVerdicts, signatures } from '../db/schema.js';

export type FeedbackReadRow = typeof reads.$inferSelect;
export type FeedbackVerdictRow = typeof readVerdicts.$inferSelect;
export type FeedbackSignatureRow = typeof signatures.$inferSelect;

/** What the site feedback is built from: the signed reads of a session, their verdicts and signatures. */
export class FeedbackRepository {
  constructor(private readonly db: TidemarkDatabase) {}

  /** Signed reads of a session, earliest signed first. */
  signedReadsOf(sessionId: string): FeedbackReadRow[] {
    return this.db
      .select()
      .from(reads)
      .where(and(eq(reads.sessionId, sessionId), eq(reads.status, 'signed')))
      .orderBy(asc(reads.signedAt), asc(reads.id))
      .all();
  }

  verdictsOf(readId: string): FeedbackVerdictRow[] {
    return this.db.select().from(readVerdicts).where(eq(readVerdicts.readId, readId)).orderBy(asc(readVerdicts.effortIndex)).all();
  }

  findSignature(signatureId: string): FeedbackSignatureRow | undefined {
    return this.db.select().from(signatures).where(eq(signatures.id, signatureId)).get();
  }
}
