import { randomUUID } from 'node:crypto';
import type { SiteInput } from '../../shared/contracts/setup.js';
import type { Site } from '../../shared/contracts/studies.js';
import type { AuditActor, AuditTrail } from '../audit/audit-trail.js';
import { AppError } from '../http/app-error.js';
import type { SiteRow, StudySetupRepository } from './study-setup-repository.js';
import { reasonForChange, requireStudy } from './study-setup-service.js';

/** The IANA zones this server's ICU knows; session times are converted with the same data. */
const TIME_ZONES: readonly string[] = Intl.supportedValuesOf('timeZone');
const TIME_ZONE_SET = new Set(TIME_ZONES);
const REGION_NAMES = new Intl.DisplayNames(['en'], { type: 'region', fallback: 'code' });

/** The English name of an ISO 3166 region code, or undefined when ICU does not know the code. */
export function countryName(code: string): string | undefined {
  const name = REGION_NAMES.of(code);
  return name && name !== code && name !== 'Unknown Region' ? name : undefined;
}

/** Zones whose name matches ignoring case, or whose city part does (e.g. "oslo" → Europe/Oslo). */
export function timeZoneSuggestions(wanted: string): string[] {
  const lower = wanted.trim().toLowerCase().replace(/\s+/g, '_');
  const city = lower.split('/').pop() ?? lower;
  return TIME_ZONES.filter((zone) => zone.toLowerCase() === lower || zone.toLowerCase().split('/').pop() === city).slice(0, 3);
}

function toSite(row: SiteRow): Site {
  return { id: row.id, studyId: row.studyId, number: row.number, name: row.name, countryCode: row.countryCode, timeZone: row.timeZone };
}

function plural(n: number, one: string, many: string): string {
  return `${n} ${n === 1 ? one : many}`;
}

/** Adding, changing and removing a study's sites. */
export class SiteSetupService {
  constructor(
    private readonly repository: StudySetupRepository,
    private readonly audit: AuditTrail,
    private readonly clock: () => Date,
  ) {}

  add(actor: AuditActor, studyId: string, input: SiteInput): Site {
    const study = requireStudy(this.repository, studyId);
    const fields = this.checkedFields(input);
    const reason = reasonForChange(this.repository, study, input.reason, `adding site ${fields.number}`);
    const row: SiteRow = { id: randomUUID(), studyId, ...fields, createdAt: this.clock().toISOString() };
    this.audit.write(actor, (record) => {
      this.assertNumberFree(studyId, fields.number);
      this.repository.insertSite(row);
      record({ studyId, siteId: row.id, entity: 'site', entityId: row.id, action: 'create', newValue: fields, reason });
    });
    return toSite(row);
  }

  update(actor: AuditActor, studyId: string, siteId: string, input: SiteInput): Site {
    const study = requireStudy(this.repository, studyId);
    const site = this.requireSite(studyId, siteId);
    const fields = this.checkedFields(input);
    const before = { number: site.number, name: site.name, countryCode: site.countryCode, timeZone: site.timeZone };
    const changedKeys = (Object.keys(fields) as (keyof typeof fields)[]).filter((key) => fields[key] !== before[key]);
    if (changedKeys.length === 0) return toSite(site);
    const reason = reasonForChange(this.repository, study, input.reason, `changing site ${site.number}`);
    this.audit.write(actor, (record) => {
      if (fields.number !== site.number) this.assertNumberFree(studyId, fields.number, siteId);
      this.repository.updateSite(siteId, fields);
      record({
        studyId,
        siteId,
        entity: 'site',
        entityId: siteId,
        action: 'update',
        oldValue: Object.fromEntries(changedKeys.map((key) => [key, before[key]])),
        newValue: Object.fromEntries(changedKeys.map((key) => [key, fields[key]])),
        reason,
      });
    });
    return toSite({ ...site, ...fields });
  }

  /**
   * Removes a site that holds nothing yet. Its coordinators' assignments to it go with it (each one
   * audited); a site with subjects, sessions or calibration checks is refused.
   */
  remove(actor: AuditActor, studyId: string, siteId: string, reasonGiven: string | undefined): void {
    const study = requireStudy(this.repository, studyId);
    const site = this.requireSite(studyId, siteId);
    const holdings = this.repository.siteHoldings(siteId);
    const held = [
      holdings.subjects > 0 ? plural(holdings.subjects, 'subject', 'subjects') : null,
      holdings.sessions > 0 ? plural(holdings.sessions, 'session', 'sessions') : null,
      holdings.calibrationChecks > 0 ? plural(holdings.calibrationChecks, 'calibration check', 'calibration checks') : null,
    ].filter((part): part is string => part !== null);
    if (held.length > 0) {
      throw AppError.conflict(
        `Site ${site.number} (${site.name}) cannot be removed: it has ${held.join(' and ')}. Sites with data stay in the study.`,
        holdings,
        'site-has-data',
      );
    }
    const reason = reasonForChange(this.repository, study, reasonGiven, `removing site ${site.number}`);
    this.audit.write(actor, (record) => {
      for (const assignment of this.repository.assignmentsOfSite(siteId)) {
        this.repository.deleteAssignment(assignment.id);
        record({
          studyId,
          siteId,
          entity: 'role-assignment',
          entityId: assignment.id,
          action: 'remove',
          oldValue: { userId: assignment.userId, role: assignment.role, siteId },
          reason: reason ?? `site ${site.number} removed`,
        });
      }
      this.repository.deleteSite(siteId);
      record({ studyId, siteId, entity: 'site', entityId: siteId, action: 'remove', oldValue: toSite(site), reason });
    });
  }

  private requireSite(studyId: string, siteId: string): SiteRow {
    const site = this.repository.findSiteAnywhere(siteId);
    if (!site || site.studyId !== studyId) throw AppError.notFound('There is no such site in this study.');
    return site;
  }

  /** The site's fields with the country and time zone checked against ICU's data. */
  private checkedFields(input: SiteInput): Pick<SiteRow, 'number' | 'name' | 'countryCode' | 'timeZone'> {
    if (!countryName(input.countryCode)) {
      throw new AppError(
        422,
        'country-unknown',
        `Country code ${input.countryCode} is not an ISO 3166 country code; use two letters such as NO, ES or CA.`,
      );
    }
    if (!TIME_ZONE_SET.has(input.timeZone)) {
      const suggestions = timeZoneSuggestions(input.timeZone);
      const hint = suggestions.length > 0 ? ` Did you mean ${suggestions.join(' or ')}?` : ' Use a zone such as Europe/Oslo or America/Toronto.';
      throw new AppError(422, 'time-zone-unknown', `Time zone "${input.timeZone}" is not an IANA time zone this server knows.${hint}`);
    }
    return { number: input.number, name: input.name, countryCode: input.countryCode, timeZone: input.timeZone };
  }

  private assertNumberFree(studyId: string, number: string, exceptSiteId?: string): void {
    const taken = this.repository.findSiteByNumber(studyId, number, exceptSiteId);
    if (taken) {
      throw AppError.conflict(`Site number ${number} is already used in this study by ${taken.name}.`, undefined, 'site-number-taken');
    }
  }
}
