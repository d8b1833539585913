import { randomUUID } from 'node:crypto';
import * as z from 'zod';
import type { CalibrationCheckRecord, calibrationCheckEntrySchema } from '../../shared/contracts/sessions.js';
import { checkCalibration } from '../../shared/spirometry/interpretation/calibration-check.js';
import type { AuditActor, AuditTrail } from '../audit/audit-trail.js';
import { AppError } from '../http/app-error.js';
import type { LockGuard } from '../locks/lock-guard.js';
import type { StudyRepository } from '../studies/study-repository.js';
import type { CalibrationCheckRow, CalibrationRepository } from './calibration-repository.js';

/** The calibration-check log of site spirometers. */
export class CalibrationService {
  constructor(
    private readonly repository: CalibrationRepository,
    private readonly studies: StudyRepository,
    private readonly audit: AuditTrail,
    private readonly clock: () => Date,
    /** Calibration checks support the sessions of their site: a study or site lock freezes them too. */
    private readonly locks: LockGuard,
  ) {}

  list(studyId: string, siteId: string): CalibrationCheckRecord[] {
    this.requireSite(studyId, siteId);
    return this.repository.listFor(studyId, [siteId], 500).map(toRecord);
  }

  add(actor: AuditActor, studyId: string, siteId: string, entry: z.infer<typeof calibrationCheckEntrySchema>): CalibrationCheckRecord {
    const site = this.requireSite(studyId, siteId);
    this.locks.assertUnlocked({ studyId, siteId }, `site ${site.number}`);
    const checkedAt = new Date(entry.checkedAt);
    if (checkedAt.getTime() > this.clock().getTime() + 5 * 60_000) {
      throw new AppError(422, 'checked-in-future', `The check time ${entry.checkedAt} is in the future.`);
    }
    const result = checkCalibration(entry.measuredVolumeL, { syringeVolumeL: entry.syringeVolumeL });
    const row: CalibrationCheckRow = {
      id: randomUUID(),
      studyId,
      siteId,
      deviceSerialNumber: entry.deviceSerialNumber,
      syringeVolumeL: entry.syringeVolumeL,
      measuredVolumeL: entry.measuredVolumeL,
      checkedAt: checkedAt.toISOString(),
      errorPercent: result.errorPercent,
      withinTolerance: result.passed,
      source: 'entered',
      uploadId: null,
      enteredBy: actor.userId,
      enteredAt: this.clock().toISOString(),
    };
    this.audit.write(actor, (record) => {
      this.repository.insert(row);
      record({ studyId, siteId, entity: 'calibration-check', entityId: row.id, action: 'enter', newValue: toRecord(row) });
    });
    return toRecord(row);
  }

  private requireSite(studyId: string, siteId: string) {
    const site = this.studies.findSite(studyId, siteId);
    if (!site) throw AppError.notFound('There is no such site in this study.');
    return site;
  }
}

function toRecord(row: CalibrationCheckRow): CalibrationCheckRecord {
  const result = checkCalibration(row.measuredVolumeL, { syringeVolumeL: row.syringeVolumeL });
  return {
    id: row.id,
    siteId: row.siteId,
    deviceSerialNumber: row.deviceSerialNumber,
    syringeVolumeL: row.syringeVolumeL,
    measuredVolumeL: row.measuredVolumeL,
    checkedAt: row.checkedAt,
    errorPercent: row.errorPercent,
    withinTolerance: row.withinTolerance,
    toleranceText: result.message,
    source: row.source,
    enteredBy: row.enteredBy,
    enteredAt: row.enteredAt,
  };
}
