import { desc } from 'drizzle-orm';
import type { TidemarkDatabase } from '../db/database.js';
import { auditEvents } from '../db/schema.js';
import type { ChainedAuditFields } from './audit-chain.js';

export type AuditEventRow = typeof auditEvents.$inferSelect;

/** Storage of the audit trail: append and read, never change. */
export class AuditRepository {
  constructor(private readonly db: TidemarkDatabase) {}

  /** Runs `work` in one SQLite transaction; writes through any repository on this database join it. */
  inTransaction<T>(work: () => T): T {
    return this.db.$client.transaction(work).immediate();
  }

  lastRow(): Pick<AuditEventRow, 'sequence' | 'hash'> | undefined {
    return this.db
      .select({ sequence: auditEvents.sequence, hash: auditEvents.hash })
      .from(auditEvents)
      .orderBy(desc(auditEvents.sequence))
      .limit(1)
      .get();
  }

  append(row: AuditEventRow): void {
    this.db.insert(auditEvents).values(row).run();
  }

  /** Every row in sequence order, read lazily so that a long trail does not sit in memory. */
  *chain(): Generator<ChainedAuditFields & { hash: string }> {
    const statement = this.db.$client.prepare(
      `select sequence, at, user_id as userId, role, study_id as studyId, site_id as siteId, entity,
              entity_id as entityId, action, old_value as oldValue, new_value as newValue, reason,
              previous_hash as previousHash, hash
         from audit_events order by sequence`,
    );
    yield* statement.iterate() as Iterable<ChainedAuditFields & { hash: string }>;
  }
}
