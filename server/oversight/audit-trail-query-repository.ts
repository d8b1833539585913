import { and, asc, count, desc, eq, gte, inArray, lt, lte, type SQL } from 'drizzle-orm';
import type { TidemarkDatabase } from '../db/database.js';
import { auditEvents, sites, users } from '../db/schema.js';

export type AuditEventRow = typeof auditEvents.$inferSelect;

/** Filters on a study's audit rows; times are ISO 8601 UTC as stored. */
export interface AuditRowFilter {
  readonly studyId: string;
  readonly siteId?: string;
  readonly userId?: string;
  readonly entity?: string;
  readonly action?: string;
  /** Inclusive lower bound. */
  readonly fromAt?: string;
  /** Upper bound, inclusive or exclusive as {@link toInclusive} says. */
  readonly toAt?: string;
  readonly toInclusive?: boolean;
}

/** Read-only queries on the audit trail for the monitor's view (writes go through the AuditTrail only). */
export class AuditTrailQueryRepository {
  constructor(private readonly db: TidemarkDatabase) {}

  /** One page of rows, newest first. */
  page(filter: AuditRowFilter, offset: number, limit: number): AuditEventRow[] {
    return this.db
      .select()
      .from(auditEvents)
      .where(where(filter))
      .orderBy(desc(auditEvents.sequence))
      .limit(limit)
      .offset(offset)
      .all();
  }

  count(filter: AuditRowFilter): number {
    return this.db.select({ rows: count() }).from(auditEvents).where(where(filter)).get()?.rows ?? 0;
  }

  /** Distinct values of one column among the study's rows, sorted. */
  distinct(studyId: string, column: 'entity' | 'action' | 'userId'): string[] {
    const field = auditEvents[column];
    return this.db
      .selectDistinct({ value: field })
      .from(auditEvents)
      .where(eq(auditEvents.studyId, studyId))
      .orderBy(asc(field))
      .all()
      .map((row) => row.value);
  }

  /** Display names of users by id. */
  userNames(userIds: readonly string[]): Map<string, string> {
    if (userIds.length === 0) return new Map();
    const rows = this.db
      .select({ id: users.id, name: users.name })
      .from(users)
      .where(inArray(users.id, [...new Set(userIds)]))
      .all();
    return new Map(rows.map((row) => [row.id, row.name]));
  }

  sitesOf(studyId: string): { id: string; number: string; name: string }[] {
    return this.db
      .select({ id: sites.id, number: sites.number, name: sites.name })
      .from(sites)
      .where(eq(sites.studyId, studyId))
      .orderBy(asc(sites.number))
      .all();
  }
}

function where(filter: AuditRowFilter): SQL | undefined {
  return and(
    eq(auditEvents.studyId, filter.studyId),
    filter.siteId ? eq(auditEvents.siteId, filter.siteId) : undefined,
    filter.userId ? eq(auditEvents.userId, filter.userId) : undefined,
    filter.entity ? eq(auditEvents.entity, filter.entity) : undefined,
    filter.action ? eq(auditEvents.action, filter.action) : undefined,
    // Stored times are toISOString() text, so text order is time order.
    filter.fromAt ? gte(auditEvents.at, filter.fromAt) : undefined,
    filter.toAt ? (filter.toInclusive ? lte(auditEvents.at, filter.toAt) : lt(auditEvents.at, filter.toAt)) : undefined,
  );
}
