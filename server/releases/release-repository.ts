import type { Statement } from 'better-sqlite3';
import { and, asc, eq, isNull } from 'drizzle-orm';
import type { TidemarkDatabase } from '../db/database.js';
import { auditEvents, dataLocks, studies } from '../db/schema.js';
import type { EffortFacts, FingerprintRow, LockHead, SessionDetails, SessionHead, SignedReadHead, VerdictFacts } from './release-scope.js';

export type ReleaseStudyRow = typeof studies.$inferSelect;
export type ReleaseAuditRow = typeof auditEvents.$inferSelect;

/** Reads the locked data a release is built from: sessions, locks, final reads, efforts and verdicts. */
export class ReleaseRepository {
  private headsStatement: Statement | undefined;
  private sessionsStatement: Statement | undefined;
  private readsByIdStatement: Statement | undefined;
  private readHeadsStatement: Statement | undefined;
  private effortsStatement: Statement | undefined;
  private fingerprintReadsStatement: Statement | undefined;
  private fingerprintSessionsStatement: Statement | undefined;
  private effortCountsStatement: Statement | undefined;
  private effortCountStatement: Statement | undefined;
  private verdictsStatement: Statement | undefined;

  constructor(private readonly db: TidemarkDatabase) {}

  findStudy(studyId: string): ReleaseStudyRow | undefined {
    return this.db.select().from(studies).where(eq(studies.id, studyId)).get();
  }

  /**
   * Every session of the study with the ids, codes and order of its site, subject and schedule.
   * Values repeated across sessions (codes, ids of sites and visits) are shared, not copied per row.
   */
  sessionHeads(studyId: string): SessionHead[] {
    this.headsStatement ??= this.db.$client.prepare(
      `select s.id, s.site_id as siteId, site.number as siteNumber, s.subject_id as subjectId, subject.code as subjectCode,
              s.visit_id as visitId, visit.code as visitCode, visit.ordinal as visitOrdinal,
              timepoint.code as timepointCode, timepoint.ordinal as timepointOrdinal,
              s.bronchodilator, s.status, s.updated_at as updatedAt
         from test_sessions s
         join sites site on site.id = s.site_id
         join subjects subject on subject.id = s.subject_id
         join visits visit on visit.id = s.visit_id
         join timepoints timepoint on timepoint.id = s.timepoint_id
        where s.study_id = ?`,
    );
    const shared = new Map<string, string>();
    const one = (value: string) => {
      const known = shared.get(value);
      if (known !== undefined) return known;
      shared.set(value, value);
      return value;
    };
    return (this.headsStatement.all(studyId) as SessionHead[]).map((row) => ({
      id: row.id,
      siteId: one(row.siteId),
      siteNumber: one(row.siteNumber),
      subjectId: row.subjectId,
      subjectCode: row.subjectCode,
      visitId: one(row.visitId),
      visitCode: one(row.visitCode),
      visitOrdinal: row.visitOrdinal,
      timepointCode: one(row.timepointCode),
      timepointOrdinal: row.timepointOrdinal,
      bronchodilator: row.bronchodilator,
      status: one(row.status),
      updatedAt: row.updatedAt,
    }));
  }

  /**
   * The given sessions with everything the release files say of them but their efforts, by
   * session id. One prepared statement takes the ids as a JSON array, so the release's many
   * batches reuse it.
   */
  sessionsById(sessionIds: readonly string[]): Map<string, SessionHead & SessionDetails> {
    this.sessionsStatement ??= this.db.$client.prepare(
      `select s.id, s.site_id as siteId, site.number as siteNumber, s.subject_id as subjectId, subject.code as subjectCode,
              s.visit_id as visitId, visit.code as visitCode, visit.ordinal as visitOrdinal, visit.name as visitName,
              timepoint.code as timepointCode, timepoint.ordinal as timepointOrdinal, timepoint.name as timepointName,
              s.bronchodilator, s.status, s.updated_at as updatedAt, s.tested_at as testedAt, s.time_zone as timeZone,
              s.age_years as ageYears, s.height_cm as heightCm, s.weight_kg as weightKg, s.sex, s.technician_code as technicianCode,
              s.device_manufacturer as deviceManufacturer, s.device_model as deviceModel, s.device_serial_number as deviceSerialNumber
         from test_sessions s
         join sites site on site.id = s.site_id
         join subjects subject on subject.id = s.subject_id
         join visits visit on visit.id = s.visit_id
         join timepoints timepoint on timepoint.id = s.timepoint_id
        where s.id in (select value from json_each(?))`,
    );
    const sessions = new Map<string, SessionHead & SessionDetails>();
    for (const row of this.sessionsStatement.all(JSON.stringify(sessionIds)) as (SessionHead & SessionDetails)[]) sessions.set(row.id, row);
    return sessions;
  }

  /** Locks of the study that are in force. */
  activeLocks(studyId: string): LockHead[] {
    return this.db
      .select({ id: dataLocks.id, scope: dataLocks.scope, scopeId: dataLocks.scopeId, lockedAt: dataLocks.lockedAt, unlockedAt: dataLocks.unlockedAt })
      .from(dataLocks)
      .where(and(eq(dataLocks.studyId, studyId), isNull(dataLocks.unlockedAt)))
      .orderBy(asc(dataLocks.lockedAt), asc(dataLocks.id))
      .all();
  }

  /**
   * Signed reads of the study's sessions, with the printed name of their signature, without their
   * stored results (resultJson null): a study's results are read a batch at a time (signedReadsById).
   */
  signedReads(studyId: string): SignedReadHead[] {
    this.readHeadsStatement ??= this.db.$client.prepare(signedReadsSql('null', 'r.study_id = ?'));
    return this.readHeadsStatement.all(studyId) as SignedReadHead[];
  }

  /**
   * Every session of the study with each of its signed reads (a row with a null read when it has
   * none), ordered by session id: what the data fingerprint is computed from. Sessions come one
   * at a time; the reads' few columns are read first, in one pass (a join would look up the reads
   * session by session, several times slower).
   */
  *fingerprintRows(studyId: string): Generator<FingerprintRow> {
    this.fingerprintReadsStatement ??= this.db.$client.prepare(
      `select session_id as sessionId, id, kind, version, coalesce(signed_at, updated_at) as signedAt, upload_id as uploadId
         from reads where study_id = ? and status = 'signed'`,
    );
    this.fingerprintSessionsStatement ??= this.db.$client.prepare(
      `select s.id as sessionId, s.updated_at as updatedAt, s.status, s.site_id as siteId, visit.code as visitCode
         from test_sessions s
         join visits visit on visit.id = s.visit_id
        where s.study_id = ?
        order by s.id`,
    );
    type ReadRow = NonNullable<FingerprintRow['read']> & { sessionId: string };
    const readsBySession = new Map<string, ReadRow[]>();
    for (const read of this.fingerprintReadsStatement.all(studyId) as ReadRow[]) {
      const list = readsBySession.get(read.sessionId);
      if (list) list.push(read);
      else readsBySession.set(read.sessionId, [read]);
    }
    for (const session of this.fingerprintSessionsStatement.iterate(studyId) as IterableIterator<Omit<FingerprintRow, 'read'>>) {
      const reads = readsBySession.get(session.sessionId);
      if (!reads) yield { ...session, read: null };
      else for (const { sessionId: _session, ...read } of reads) yield { ...session, read };
    }
  }

  /** The given reads, if still signed, with their stored results, by read id. */
  signedReadsById(readIds: readonly string[]): Map<string, SignedReadHead> {
    this.readsByIdStatement ??= this.db.$client.prepare(signedReadsSql('r.result_json', 'r.id in (select value from json_each(?))'));
    const reads = new Map<string, SignedReadHead>();
    for (const read of this.readsByIdStatement.all(JSON.stringify(readIds)) as SignedReadHead[]) reads.set(read.id, read);
    return reads;
  }

  /**
   * Efforts of the given checked files, grouped by file; metrics beyond the stored columns come
   * from their JSON inside SQLite. One prepared statement takes the ids as a JSON array, so the
   * release's many batches reuse it.
   */
  effortsOfUploads(uploadIds: readonly string[]): Map<string, EffortFacts[]> {
    const grouped = new Map<string, EffortFacts[]>(uploadIds.map((id) => [id, []]));
    this.effortsStatement ??= this.db.$client.prepare(
      `select upload_id as uploadId, id, effort_index as effortIndex, label, fev1_l as fev1L, fvc_l as fvcL, pef_l_per_s as pefLPerS,
              json_extract(metrics_json, '$.fef2575LPerS') as fef2575LPerS, json_extract(metrics_json, '$.fetS') as fetS,
              json_extract(metrics_json, '$.bevL') as bevL, suggested_fev1_verdict as suggestedFev1Verdict,
              suggested_fvc_verdict as suggestedFvcVerdict,
              coalesce((select group_concat(json_extract(finding.value, '$.code'), ';') from json_each(findings_json) as finding), '') as engineFindings
         from efforts where upload_id in (select value from json_each(?))`,
    );
    for (const row of this.effortsStatement.all(JSON.stringify(uploadIds)) as (EffortFacts & { uploadId: string })[]) {
      const { uploadId, ...effort } = row;
      grouped.get(uploadId)?.push(effort);
    }
    return grouped;
  }

  /** How many efforts the given checked files have in all. */
  effortCount(uploadIds: readonly string[]): number {
    this.effortCountStatement ??= this.db.$client.prepare(`select count(*) from efforts where upload_id in (select value from json_each(?))`).pluck();
    return this.effortCountStatement.get(JSON.stringify(uploadIds)) as number;
  }

  /** How many efforts each of the given checked files has, by upload id. */
  effortCountsOfUploads(uploadIds: readonly string[]): Map<string, number> {
    this.effortCountsStatement ??= this.db.$client.prepare(
      `select upload_id as uploadId, count(*) as count from efforts where upload_id in (select value from json_each(?)) group by upload_id`,
    );
    const counts = new Map<string, number>();
    for (const row of this.effortCountsStatement.all(JSON.stringify(uploadIds)) as { uploadId: string; count: number }[]) counts.set(row.uploadId, row.count);
    return counts;
  }

  /** The verdicts of the given reads, grouped by read. */
  verdictsOfReads(readIds: readonly string[]): Map<string, VerdictFacts[]> {
    const grouped = new Map<string, VerdictFacts[]>(readIds.map((id) => [id, []]));
    this.verdictsStatement ??= this.db.$client.prepare(
      `select read_id as readId, effort_index as effortIndex, fev1_verdict as fev1Verdict, fvc_verdict as fvcVerdict,
              findings_json as findingsJson, comment
         from read_verdicts where read_id in (select value from json_each(?))`,
    );
    for (const row of this.verdictsStatement.all(JSON.stringify(readIds)) as (VerdictFacts & { readId: string })[]) {
      const { readId, ...verdict } = row;
      grouped.get(readId)?.push(verdict);
    }
    return grouped;
  }

  /** The audit rows of the study's releases, oldest first. */
  releaseEvents(studyId: string, releaseId?: string): ReleaseAuditRow[] {
    return this.db
      .select()
      .from(auditEvents)
      .where(
        and(
          eq(auditEvents.studyId, studyId),
          eq(auditEvents.entity, 'release'),
          releaseId === undefined ? undefined : eq(auditEvents.entityId, releaseId),
        ),
      )
      .orderBy(asc(auditEvents.sequence))
      .all();
  }
}

/** Signed reads with the printed name of their signature, `resultJson` the stored result or null. */
function signedReadsSql(resultJson: 'r.result_json' | 'null', where: string): string {
  return `select r.id, r.session_id as sessionId, r.upload_id as uploadId, r.kind, r.version,
                 coalesce(r.signed_at, r.updated_at) as signedAt, ${resultJson} as resultJson,
                 coalesce(signature.printed_name, reader.name) as signerName
            from reads r
            left join signatures signature on signature.id = r.signature_id
            join users reader on reader.id = r.reader_id
           where ${where} and r.status = 'signed'`;
}
