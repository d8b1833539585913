import * as z from 'zod';
import {
  auditQuerySchema,
  type AuditEntry,
  type AuditFilterOptions,
  type AuditPage,
  type ChainVerificationResult,
} from '../../shared/contracts/oversight.js';
import { blindingSchema } from '../../shared/contracts/setup.js';
import type { AuditActor, AuditTrail } from '../audit/audit-trail.js';
import type { Principal } from '../auth/principal.js';
import { AppError } from '../http/app-error.js';
import type { StudyRepository } from '../studies/study-repository.js';
import type { AuditEventRow, AuditRowFilter, AuditTrailQueryRepository } from './audit-trail-query-repository.js';
import { withholdTreatmentFields } from './blinding-redaction.js';

/** How the system actor is named in the trail. */
export const SYSTEM_USER_NAME = 'Tidemark (system)';

const BLINDING_NOTES = {
  applied:
    'Monitors are blinded to treatment in this study: any value naming a treatment arm, randomisation code, kit or dose group ' +
    'is withheld. Tidemark stores no treatment allocation, so normally nothing is withheld.',
  notYou: 'Monitors are blinded to treatment in this study; you do not hold the monitor role here, so nothing is withheld from you.',
  open: 'This study does not blind monitors to treatment. Tidemark stores no treatment allocation in any case.',
} as const;

type ParsedAuditQuery = z.infer<typeof auditQuerySchema>;

/**
 * The audit trail as the monitor reads it (filters, pages, old and new values parsed, treatment
 * fields withheld where monitors are blinded), and verification of the hash chain on demand.
 */
export class AuditTrailQueryService {
  constructor(
    private readonly repository: AuditTrailQueryRepository,
    private readonly studies: StudyRepository,
    private readonly audit: AuditTrail,
    private readonly clock: () => Date,
  ) {}

  /** One page of the study's trail, newest first. */
  page(principal: Principal, studyId: string, query: ParsedAuditQuery): AuditPage {
    const study = this.requireStudy(studyId);
    const filter = this.rowFilter(studyId, query);
    const total = this.repository.count(filter);
    const rows = this.repository.page(filter, query.page * query.pageSize, query.pageSize);
    const names = this.repository.userNames(rows.map((row) => row.userId));
    const siteNumbers = new Map(this.repository.sitesOf(studyId).map((site) => [site.id, site.number]));
    const monitorsBlinded = this.monitorsBlinded(study.blindingJson);
    const appliesToYou = monitorsBlinded && principal.assignments.some((a) => a.studyId === studyId && a.role === 'monitor');
    return {
      items: rows.map((row) => toEntry(row, names, siteNumbers, appliesToYou)),
      total,
      page: query.page,
      pageSize: query.pageSize,
      blinding: {
        monitorsBlinded,
        appliesToYou,
        note: appliesToYou ? BLINDING_NOTES.applied : monitorsBlinded ? BLINDING_NOTES.notYou : BLINDING_NOTES.open,
      },
    };
  }

  /** Sites, people, entities and actions found in the study's trail. */
  filterOptions(studyId: string): AuditFilterOptions {
    this.requireStudy(studyId);
    const userIds = this.repository.distinct(studyId, 'userId');
    const names = this.repository.userNames(userIds);
    return {
      sites: this.repository.sitesOf(studyId),
      users: userIds
        .map((id) => ({ id, name: names.get(id) ?? (id === 'system' ? SYSTEM_USER_NAME : id) }))
        .sort((a, b) => a.name.localeCompare(b.name)),
      entities: this.repository.distinct(studyId, 'entity'),
      actions: this.repository.distinct(studyId, 'action'),
    };
  }

  /**
   * Walks the whole chain (every study's rows: they form one chain) and records that a person
   * verified it, with the outcome, in the study's trail. The new row comes after the walk, so it
   * is not among the rows checked.
   */
  verifyChain(actor: AuditActor, studyId: string): ChainVerificationResult {
    this.requireStudy(studyId);
    const started = performance.now();
    const verification = this.audit.verify();
    const elapsedMs = Math.round((performance.now() - started) * 10) / 10;
    const result: ChainVerificationResult = {
      ok: verification.ok,
      rowsChecked: verification.rowsChecked,
      firstBreak: verification.firstBreak,
      elapsedMs,
      verifiedAt: this.clock().toISOString(),
    };
    this.audit.write(actor, (record) =>
      record({
        studyId,
        entity: 'audit-trail',
        entityId: 'chain',
        action: 'verify',
        newValue: { ok: result.ok, rowsChecked: result.rowsChecked, firstBreak: result.firstBreak, elapsedMs },
      }),
    );
    return result;
  }

  private rowFilter(studyId: string, query: ParsedAuditQuery): AuditRowFilter {
    if (query.siteId && !this.studies.findSite(studyId, query.siteId)) {
      throw AppError.badRequest(`Invalid query: siteId: there is no site "${query.siteId}" in this study.`, undefined, 'invalid-input');
    }
    const fromAt = query.from === undefined ? undefined : startOf(query.from);
    const to = query.to === undefined ? undefined : endOf(query.to);
    if (fromAt && to && fromAt > to.at) {
      throw AppError.badRequest(`Invalid query: from (${query.from}) is after to (${query.to}).`, undefined, 'invalid-input');
    }
    return {
      studyId,
      siteId: query.siteId,
      userId: query.userId,
      entity: query.entity,
      action: query.action,
      fromAt,
      toAt: to?.at,
      toInclusive: to?.inclusive,
    };
  }

  private requireStudy(studyId: string) {
    const study = this.studies.findStudy(studyId);
    if (!study) throw AppError.notFound('There is no such study.');
    return study;
  }

  /** A blinding that cannot be read counts as blinded: withholding is the safe mistake. */
  private monitorsBlinded(blindingJson: string): boolean {
    try {
      const parsed = blindingSchema.safeParse(JSON.parse(blindingJson));
      return parsed.success ? parsed.data.monitorsBlinded : true;
    } catch {
      // SyntaxError from a corrupt column: treated as blinded (see above).
      return true;
    }
  }
}

const DATE_ONLY = /^\d{4}-\d{2}-\d{2}$/;

/** The first instant of a filter bound, as stored text (ISO UTC). */
function startOf(bound: string): string {
  return DATE_ONLY.test(bound) ? `${bound}T00:00:00.000Z` : new Date(bound).toISOString();
}

/** The upper bound: a bare date covers its whole UTC day (up to the next day, exclusive). */
function endOf(bound: string): { at: string; inclusive: boolean } {
  if (!DATE_ONLY.test(bound)) return { at: new Date(bound).toISOString(), inclusive: true };
  const next = new Date(`${bound}T00:00:00.000Z`);
  next.setUTCDate(next.getUTCDate() + 1);
  return { at: next.toISOString(), inclusive: false };
}

function toEntry(row: AuditEventRow, names: Map<string, string>, siteNumbers: Map<string, string>, blinded: boolean): AuditEntry {
  const oldValue = parseStored(row.oldValue);
  const newValue = parseStored(row.newValue);
  const shownOld = blinded ? withholdTreatmentFields(oldValue, 'oldValue') : { value: oldValue, withheld: [] };
  const shownNew = blinded ? withholdTreatmentFields(newValue, 'newValue') : { value: newValue, withheld: [] };
  return {
    sequence: row.sequence,
    at: row.at,
    user: { id: row.userId, name: names.get(row.userId) ?? (row.userId === 'system' ? SYSTEM_USER_NAME : row.userId), role: row.role },
    siteId: row.siteId,
    siteNumber: row.siteId ? (siteNumbers.get(row.siteId) ?? null) : null,
    entity: row.entity,
    entityId: row.entityId,
    action: row.action,
    oldValue: shownOld.value,
    newValue: shownNew.value,
    reason: row.reason,
    withheld: [...shownOld.withheld, ...shownNew.withheld],
  };
}

/** Stored values are JSON written by the AuditTrail; anything else is shown as the text it is. */
function parseStored(text: string | null): unknown {
  if (text === null) return null;
  try {
    return JSON.parse(text) as unknown;
  } catch {
    // SyntaxError: a row written outside the AuditTrail (the chain check names such rows).
    return text;
  }
}
