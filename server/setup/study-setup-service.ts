import { randomUUID } from 'node:crypto';
import type { Schedule } from '../../shared/contracts/sessions.js';
import {
  blindingSchema,
  type CreateStudy,
  type ProtocolChoice,
  type ScheduleUpdate,
  type StudySetup,
  type StudySetupUpdate,
} from '../../shared/contracts/setup.js';
import type { AuditActor, AuditTrail } from '../audit/audit-trail.js';
import type { Principal } from '../auth/principal.js';
import { AppError } from '../http/app-error.js';
import {
  DEFAULT_PROTOCOL_ID,
  listProtocolFiles,
  loadProtocol,
  loadProtocolCatalogue,
  ProtocolCatalogueError,
} from '../protocols/protocol-catalogue.js';
import {
  describeDuplicate,
  describeOverlap,
  findDuplicateCodes,
  findWindowOverlaps,
  planCodedListChange,
} from './schedule-rules.js';
import type { StudyRow, StudySetupRepository } from './study-setup-repository.js';

/**
 * Once a study holds data (any session), every change to its setup needs a reason for the audit
 * trail; before that, setting up is routine. Returns the reason to record (null when none was needed).
 */
export function reasonForChange(repository: StudySetupRepository, study: StudyRow, reason: string | undefined, change: string): string | null {
  const sessions = repository.countSessions(study.id);
  const given = reason?.trim() || null;
  if (sessions > 0 && !given) {
    throw AppError.badRequest(
      `Study ${study.code} already has ${sessions === 1 ? 'a session' : `${sessions} sessions`}: give a reason for ${change}.`,
      { sessionCount: sessions },
      'reason-required',
    );
  }
  return given;
}

/** The study, or 404. */
export function requireStudy(repository: StudySetupRepository, studyId: string): StudyRow {
  const study = repository.findStudy(studyId);
  if (!study) throw AppError.notFound('There is no such study.');
  return study;
}

/** The settings of a study row as the audit trail and the API show them. */
function settingsOf(row: StudyRow) {
  return {
    code: row.code,
    title: row.title,
    sponsor: row.sponsor,
    indication: row.indication,
    protocolRuleSetId: row.protocolRuleSetId,
    protocolVersion: row.protocolVersion,
    readDesign: row.readDesign,
    dualSampleFraction: row.dualSampleFraction,
    blinding: blindingSchema.parse(JSON.parse(row.blindingJson)),
    turnaroundHours: row.turnaroundHours,
  };
}
type StudySettings = ReturnType<typeof settingsOf>;

/** Only the fields that differ, before and after. */
function changedFields<T extends object>(before: T, after: T): { oldValue: Partial<T>; newValue: Partial<T> } | null {
  const keys = (Object.keys(after) as (keyof T)[]).filter((key) => JSON.stringify(before[key]) !== JSON.stringify(after[key]));
  if (keys.length === 0) return null;
  return {
    oldValue: Object.fromEntries(keys.map((key) => [key, before[key]])) as Partial<T>,
    newValue: Object.fromEntries(keys.map((key) => [key, after[key]])) as Partial<T>,
  };
}

/** Creating studies, their settings and their visit schedule; every write goes through the audit trail. */
export class StudySetupService {
  constructor(
    private readonly repository: StudySetupRepository,
    private readonly audit: AuditTrail,
    private readonly clock: () => Date,
  ) {}

  setup(studyId: string): StudySetup {
    const study = requireStudy(this.repository, studyId);
    return {
      id: study.id,
      ...settingsOf(study),
      equationsId: study.equationsId,
      referenceSetId: study.referenceSetId,
      sessionCount: this.repository.countSessions(studyId),
      updatedAt: study.updatedAt,
      protocolChoices: this.protocolChoices(),
    };
  }

  /** Creates a study; any study admin may, and becomes its study admin. */
  create(principal: Principal, input: CreateStudy): StudySetup {
    if (!principal.assignments.some((assignment) => assignment.role === 'study-admin')) {
      throw AppError.forbidden('Only a study admin may create a study; you hold no study-admin role in any study.');
    }
    const protocolRuleSetId = input.protocolRuleSetId ?? DEFAULT_PROTOCOL_ID;
    const protocolVersion = input.protocolVersion ?? null;
    this.checkProtocol(protocolRuleSetId, protocolVersion);
    const actor: AuditActor = { userId: principal.user.id, role: 'study-admin' };
    const studyId = randomUUID();
    const assignmentId = randomUUID();
    const now = this.clock().toISOString();
    this.audit.write(actor, (record) => {
      this.assertCodeFree(input.code);
      this.repository.insertStudy({
        id: studyId,
        code: input.code,
        title: input.title,
        sponsor: input.sponsor,
        indication: input.indication,
        protocolRuleSetId,
        protocolVersion,
        createdAt: now,
        updatedAt: now,
      });
      this.repository.insertAssignment({ id: assignmentId, userId: principal.user.id, studyId, role: 'study-admin', siteId: null, createdAt: now });
      record({ studyId, entity: 'study', entityId: studyId, action: 'create', newValue: settingsOf(this.repository.findStudy(studyId)!) });
      record({
        studyId,
        entity: 'role-assignment',
        entityId: assignmentId,
        action: 'assign',
        newValue: { userId: principal.user.id, email: principal.user.email, role: 'study-admin', siteId: null },
      });
    });
    return this.setup(studyId);
  }

  /** Replaces the study's settings; only changed fields are audited, with the reason once data exists. */
  update(actor: AuditActor, studyId: string, input: StudySetupUpdate): StudySetup {
    const study = requireStudy(this.repository, studyId);
    const before = settingsOf(study);
    const after: StudySettings = {
      code: input.code,
      title: input.title,
      sponsor: input.sponsor,
      indication: input.indication,
      protocolRuleSetId: input.protocolRuleSetId,
      protocolVersion: input.protocolVersion,
      readDesign: input.readDesign,
      // Only a dual-sample design reads a fraction; the others keep 0 so no stale number lingers.
      dualSampleFraction: input.readDesign === 'dual-sample' ? (input.dualSampleFraction ?? 0) : 0,
      blinding: input.blinding,
      turnaroundHours: input.turnaroundHours,
    };
    const change = changedFields(before, after);
    if (!change) return this.setup(studyId);
    if (change.newValue.protocolRuleSetId !== undefined || change.newValue.protocolVersion !== undefined) {
      this.checkProtocol(after.protocolRuleSetId, after.protocolVersion);
    }
    const reason = reasonForChange(this.repository, study, input.reason, 'changing the study settings');
    this.audit.write(actor, (record) => {
      if (change.newValue.code !== undefined) this.assertCodeFree(after.code, studyId);
      const { blinding, ...columns } = after;
      this.repository.updateStudy(studyId, { ...columns, blindingJson: JSON.stringify(blinding), updatedAt: this.clock().toISOString() });
      record({ studyId, entity: 'study', entityId: studyId, action: 'update', ...change, reason });
    });
    return this.setup(studyId);
  }

  /**
   * Replaces the visit schedule and timepoints. Refuses duplicate codes, overlapping visit windows
   * and the removal of a visit or timepoint that sessions use; unchanged codes keep their ids.
   */
  updateSchedule(actor: AuditActor, studyId: string, input: ScheduleUpdate): Schedule {
    const study = requireStudy(this.repository, studyId);
    const duplicates = [
      ...findDuplicateCodes(input.visits.map((visit) => visit.code)).map((d) => describeDuplicate('visit', d)),
      ...findDuplicateCodes(input.timepoints.map((timepoint) => timepoint.code)).map((d) => describeDuplicate('timepoint', d)),
    ];
    if (duplicates.length > 0) {
      throw new AppError(422, 'duplicate-code', `${duplicates.join('; ')}. Each code may be used once.`, { duplicates });
    }
    const overlaps = findWindowOverlaps(input.visits);
    if (overlaps.length > 0) {
      throw new AppError(
        422,
        'visit-windows-overlap',
        `${overlaps.map(describeOverlap).join('; ')}. A session on those days could belong to either visit: narrow a window or move a visit.`,
        { overlaps: overlaps.map((o) => ({ first: o.first.code, second: o.second.code, fromDay: o.fromDay, toDay: o.toDay })) },
      );
    }

    const storedVisits = this.repository.visitsOf(studyId);
    const storedTimepoints = this.repository.timepointsOf(studyId);
    const visitPlan = planCodedListChange(storedVisits, input.visits);
    const timepointPlan = planCodedListChange(storedTimepoints, input.timepoints);
    this.refuseRemovalInUse(visitPlan.removed, timepointPlan.removed, studyId);

    const before = this.schedule(studyId);
    const after: Schedule = {
      visits: input.visits.map(({ code, name, dayOffset, windowBeforeDays, windowAfterDays }) => ({
        code,
        name,
        dayOffset,
        windowBeforeDays,
        windowAfterDays,
      })),
      timepoints: input.timepoints.map(({ code, name }) => ({ code, name })),
    };
    if (JSON.stringify(before) === JSON.stringify(after)) return before;
    const reason = reasonForChange(this.repository, study, input.reason, 'changing the visit schedule');

    this.audit.write(actor, (record) => {
      for (const visit of visitPlan.removed) this.repository.deleteVisit(visit.id);
      for (const timepoint of timepointPlan.removed) this.repository.deleteTimepoint(timepoint.id);
      for (const { stored, proposed, ordinal } of visitPlan.kept) {
        const { name, dayOffset, windowBeforeDays, windowAfterDays } = proposed;
        this.repository.updateVisit(stored.id, { name, dayOffset, windowBeforeDays, windowAfterDays, ordinal });
      }
      for (const { proposed, ordinal } of visitPlan.added) {
        const { code, name, dayOffset, windowBeforeDays, windowAfterDays } = proposed;
        this.repository.insertVisit({ id: randomUUID(), studyId, code, name, dayOffset, windowBeforeDays, windowAfterDays, ordinal });
      }
      for (const { stored, proposed, ordinal } of timepointPlan.kept) {
        this.repository.updateTimepoint(stored.id, { name: proposed.name, ordinal });
      }
      for (const { proposed, ordinal } of timepointPlan.added) {
        this.repository.insertTimepoint({ id: randomUUID(), studyId, code: proposed.code, name: proposed.name, ordinal });
      }
      record({ studyId, entity: 'schedule', entityId: studyId, action: 'update', oldValue: before, newValue: after, reason });
    });
    return this.schedule(studyId);
  }

  schedule(studyId: string): Schedule {
    return {
      visits: this.repository.visitsOf(studyId).map(({ code, name, dayOffset, windowBeforeDays, windowAfterDays }) => ({
        code,
        name,
        dayOffset,
        windowBeforeDays,
        windowAfterDays,
      })),
      timepoints: this.repository.timepointsOf(studyId).map(({ code, name }) => ({ code, name })),
    };
  }

  private refuseRemovalInUse(
    removedVisits: readonly { id: string; code: string; name: string }[],
    removedTimepoints: readonly { id: string; code: string; name: string }[],
    studyId: string,
  ): void {
    const visitUse = this.repository.sessionCountsByVisit(studyId);
    const timepointUse = this.repository.sessionCountsByTimepoint(studyId);
    const sessions = (n: number) => (n === 1 ? '1 session uses it' : `${n} sessions use it`);
    const inUse = [
      ...removedVisits.filter((v) => visitUse.has(v.id)).map((v) => ({ kind: 'visit', ...v, sessions: visitUse.get(v.id)! })),
      ...removedTimepoints.filter((t) => timepointUse.has(t.id)).map((t) => ({ kind: 'timepoint', ...t, sessions: timepointUse.get(t.id)! })),
    ];
    if (inUse.length === 0) return;
    throw AppError.conflict(
      inUse.map((item) => `The ${item.kind} ${item.code} (${item.name}) cannot be removed: ${sessions(item.sessions)}`).join('; ') + '.',
      { inUse: inUse.map(({ kind, code, sessions: count }) => ({ kind, code, sessions: count })) },
      'schedule-in-use',
    );
  }

  private assertCodeFree(code: string, exceptStudyId?: string): void {
    const taken = this.repository.findStudyByCode(code, exceptStudyId);
    if (taken) {
      throw AppError.conflict(`The study code ${code} is already used by study ${taken.code} (${taken.title}).`, undefined, 'study-code-taken');
    }
  }

  private protocolChoices(): ProtocolChoice[] {
    return loadProtocolCatalogue().map((protocol) => ({ id: protocol.id, version: protocol.version, title: protocol.title }));
  }

  /** The rule set must exist in the catalogue (in the pinned version, when one is pinned) and load cleanly. */
  private checkProtocol(id: string, version: number | null): void {
    const files = listProtocolFiles();
    const versions = files.filter((file) => file.id === id).map((file) => file.version);
    if (versions.length === 0) {
      const known = [...new Set(files.map((file) => file.id))].join(', ') || 'none';
      throw new AppError(422, 'protocol-unknown', `There is no protocol rule set "${id}"; the rule sets are: ${known}.`);
    }
    if (version !== null && !versions.includes(version)) {
      throw new AppError(422, 'protocol-unknown', `Protocol rule set ${id} has no version ${version}; its versions are ${versions.join(', ')}.`);
    }
    try {
      loadProtocol(version === null ? id : `${id}@${version}`);
    } catch (error) {
      // ProtocolCatalogueError: the file exists but is broken; the admin must hear which file and why.
      if (error instanceof ProtocolCatalogueError) {
        throw new AppError(422, 'protocol-invalid', `Protocol rule set ${id} cannot be used: ${error.message}.`);
      }
      throw error;
    }
  }
}
