import type {
  EffortSummary,
  SessionCheck,
  SessionDetail,
  SessionSummary,
  TestDemographics,
  Upload,
} from '../../shared/contracts/sessions.js';
import type { EffortRow, LockRow, SessionListRow, UploadRow } from './session-repository.js';

/** Turns stored rows into the shapes the API promises. */
export function toSessionSummary(row: SessionListRow, locked: boolean): SessionSummary {
  const { session } = row;
  return {
    id: session.id,
    studyId: session.studyId,
    siteId: session.siteId,
    siteNumber: row.siteNumber,
    subjectCode: row.subjectCode,
    visitCode: row.visitCode,
    timepointCode: row.timepointCode,
    bronchodilator: session.bronchodilator,
    testedAt: session.testedAt,
    timeZone: session.timeZone,
    status: session.status as SessionSummary['status'],
    fev1Grade: session.fev1Grade as SessionSummary['fev1Grade'],
    fvcGrade: session.fvcGrade as SessionSummary['fvcGrade'],
    effortCount: row.effortCount,
    registeredAt: session.registeredAt,
    updatedAt: session.updatedAt,
    locked,
  };
}

export function toUpload(row: UploadRow): Upload {
  return {
    id: row.id,
    sessionId: row.sessionId,
    originalName: row.originalName,
    sizeBytes: row.sizeBytes,
    sha256: row.sha256,
    detectedFormat: row.detectedFormat as Upload['detectedFormat'],
    uploadedBy: row.uploadedBy,
    receivedAt: row.receivedAt,
    outcome: row.outcome,
    errors: JSON.parse(row.errors) as string[],
    processedAt: row.processedAt,
  };
}

export function toEffortSummary(row: EffortRow): EffortSummary {
  const metrics = JSON.parse(row.metricsJson) as {
    timeZeroS: number;
    bevL: number;
    fev6L: number | null;
    fef2575LPerS: number | null;
    fetS: number;
    endOfTest: { met: boolean };
  };
  return {
    id: row.id,
    index: row.effortIndex,
    label: row.label,
    signal: row.signal,
    sampleRateHz: row.sampleRateHz,
    timeZeroS: metrics.timeZeroS,
    bevL: metrics.bevL,
    fev1L: row.fev1L,
    fvcL: row.fvcL,
    fev6L: metrics.fev6L,
    pefLPerS: row.pefLPerS,
    fef2575LPerS: metrics.fef2575LPerS,
    fetS: metrics.fetS,
    endOfTestMet: metrics.endOfTest.met,
    suggestedFev1Verdict: row.suggestedFev1Verdict as EffortSummary['suggestedFev1Verdict'],
    suggestedFvcVerdict: row.suggestedFvcVerdict as EffortSummary['suggestedFvcVerdict'],
    findings: JSON.parse(row.findingsJson) as EffortSummary['findings'],
    verdictReasons: JSON.parse(row.verdictReasonsJson) as EffortSummary['verdictReasons'],
  };
}

export function toSessionDetail(
  row: SessionListRow,
  lock: LockRow | undefined,
  uploads: UploadRow[],
  efforts: EffortRow[],
): SessionDetail {
  const { session } = row;
  const demographics: TestDemographics = {
    ageYears: session.ageYears,
    heightCm: session.heightCm,
    weightKg: session.weightKg,
    sex: session.sex,
    ethnicity: session.ethnicity as TestDemographics['ethnicity'],
  };
  return {
    ...toSessionSummary(row, lock !== undefined),
    demographics,
    technicianCode: session.technicianCode,
    device: {
      manufacturer: session.deviceManufacturer,
      model: session.deviceModel,
      serialNumber: session.deviceSerialNumber,
    },
    registeredBy: session.registeredBy,
    rejectionReasons: JSON.parse(session.rejectionReasons) as string[],
    check: session.checkJson ? (JSON.parse(session.checkJson) as SessionCheck) : null,
    efforts: efforts.map(toEffortSummary),
    uploads: uploads.map(toUpload),
    lock: lock ? { reason: lock.reason, lockedAt: lock.lockedAt, scope: lock.scope } : null,
  };
}

/** "subject 101-004, visit V3, PRE-DOSE, post-bronchodilator": how people name a session. */
export function describeSession(row: Pick<SessionListRow, 'subjectCode' | 'visitCode' | 'timepointCode'> & { session: { bronchodilator: string } }): string {
  return `subject ${row.subjectCode}, visit ${row.visitCode}, timepoint ${row.timepointCode}, ${row.session.bronchodilator}-bronchodilator`;
}
