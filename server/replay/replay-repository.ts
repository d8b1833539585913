import { and, asc, eq, notInArray } from 'drizzle-orm';
import type { TidemarkDatabase } from '../db/database.js';
import { efforts, sites, subjects, testSessions, timepoints, uploads, visits } from '../db/schema.js';

/** A session whose current file was checked, with what a replay needs to read it again. */
export interface ReplaySessionRow {
  readonly sessionId: string;
  readonly siteNumber: string;
  readonly subjectCode: string;
  readonly visitCode: string;
  readonly timepointCode: string;
  readonly bronchodilator: 'pre' | 'post';
  readonly ageYears: number;
  readonly fev1Grade: string | null;
  readonly fvcGrade: string | null;
  readonly uploadId: string;
  readonly objectKey: string;
  readonly sha256: string;
  readonly originalName: string;
}

/** The engine's stored suggestion for one effort of a current file. */
export interface StoredEffortRow {
  readonly uploadId: string;
  readonly effortIndex: number;
  readonly suggestedFev1Verdict: string;
  readonly suggestedFvcVerdict: string;
}

/** Statuses in which the current file no longer stands for the session. */
const WITHOUT_CURRENT_FILE = ['awaiting-file', 'rejected'];

/** Reads for a replay; it writes nothing. */
export class ReplayRepository {
  constructor(private readonly db: TidemarkDatabase) {}

  /** Sessions of a study whose current upload was checked, in site, subject, visit and timepoint order. */
  checkedSessionsOf(studyId: string): ReplaySessionRow[] {
    return this.db
      .select({
        sessionId: testSessions.id,
        siteNumber: sites.number,
        subjectCode: subjects.code,
        visitCode: visits.code,
        timepointCode: timepoints.code,
        bronchodilator: testSessions.bronchodilator,
        ageYears: testSessions.ageYears,
        fev1Grade: testSessions.fev1Grade,
        fvcGrade: testSessions.fvcGrade,
        uploadId: uploads.id,
        objectKey: uploads.objectKey,
        sha256: uploads.sha256,
        originalName: uploads.originalName,
      })
      .from(testSessions)
      .innerJoin(uploads, eq(uploads.id, testSessions.currentUploadId))
      .innerJoin(sites, eq(sites.id, testSessions.siteId))
      .innerJoin(subjects, eq(subjects.id, testSessions.subjectId))
      .innerJoin(visits, eq(visits.id, testSessions.visitId))
      .innerJoin(timepoints, eq(timepoints.id, testSessions.timepointId))
      .where(and(eq(testSessions.studyId, studyId), eq(uploads.outcome, 'checked'), notInArray(testSessions.status, WITHOUT_CURRENT_FILE)))
      .orderBy(asc(sites.number), asc(subjects.code), asc(visits.ordinal), asc(timepoints.ordinal), asc(testSessions.bronchodilator))
      .all();
  }

  /** Stored suggestions for the efforts of the study's current files. */
  storedEffortsOf(studyId: string): StoredEffortRow[] {
    return this.db
      .select({
        uploadId: efforts.uploadId,
        effortIndex: efforts.effortIndex,
        suggestedFev1Verdict: efforts.suggestedFev1Verdict,
        suggestedFvcVerdict: efforts.suggestedFvcVerdict,
      })
      .from(efforts)
      .innerJoin(testSessions, eq(testSessions.currentUploadId, efforts.uploadId))
      .where(eq(testSessions.studyId, studyId))
      .orderBy(asc(efforts.uploadId), asc(efforts.effortIndex))
      .all();
  }
}
