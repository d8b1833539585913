import { eq } from 'drizzle-orm';
import type { TidemarkDatabase } from '../db/database.js';
import { signatures } from '../db/schema.js';

export type SignatureRow = typeof signatures.$inferSelect;

/** Storage of electronic signatures: inserted once, never changed. */
export class SignatureRepository {
  constructor(private readonly db: TidemarkDatabase) {}

  insert(row: SignatureRow): void {
    this.db.insert(signatures).values(row).run();
  }

  find(signatureId: string): SignatureRow | undefined {
    return this.db.select().from(signatures).where(eq(signatures.id, signatureId)).get();
  }
}
