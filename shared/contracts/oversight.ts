import * as z from 'zod';

/**
 * Contracts of the monitor's view: the audit trail with its filters, on-demand verification of
 * the audit hash chain, and site and reader performance. Everything here is read-only except the
 * verification, which is itself recorded in the audit trail.
 */

/** An empty query parameter (`?entity=`) means "no filter", as a cleared form field sends it. */
const optionalFilter = <T extends z.ZodType>(schema: T) => z.preprocess((value) => (value === '' ? undefined : value), schema.optional());

/** Ids, entity and action names: letters, digits and `-`, `_`, `.`, `:`. */
const filterToken = (what: string) =>
  z
    .string()
    .trim()
    .max(100, `the ${what} has at most 100 characters`)
    .regex(/^[A-Za-z0-9][A-Za-z0-9._:-]*$/, `the ${what} uses letters, digits, "-", "_", "." and ":" only`);

/** A UTC day (`2026-11-30`) or an ISO 8601 date-time with `Z` or an offset. */
const auditTimeSchema = z.union([z.iso.date(), z.iso.datetime({ offset: true })], {
  error: 'use a date (2026-11-30) or an ISO 8601 date-time with Z or an offset (2026-11-30T08:00:00Z)',
});

/** Most rows one page of the audit trail holds. */
export const AUDIT_PAGE_SIZE_MAX = 200;

/**
 * `GET /api/studies/:studyId/audit`: filters, all optional. `from` is inclusive; `to` is inclusive
 * too, and a bare date in `to` covers that whole UTC day. Pages count from 0, newest rows first.
 */
export const auditQuerySchema = z.object({
  siteId: optionalFilter(filterToken('site id')),
  userId: optionalFilter(filterToken('user id')),
  entity: optionalFilter(filterToken('entity')),
  action: optionalFilter(filterToken('action')),
  from: optionalFilter(auditTimeSchema),
  to: optionalFilter(auditTimeSchema),
  page: z.coerce.number({ error: 'page must be a whole number from 0' }).int('page must be a whole number from 0').min(0, 'page must be a whole number from 0').default(0),
  pageSize: z.coerce
    .number({ error: `pageSize must be a whole number from 1 to ${AUDIT_PAGE_SIZE_MAX}` })
    .int(`pageSize must be a whole number from 1 to ${AUDIT_PAGE_SIZE_MAX}`)
    .min(1, `pageSize must be a whole number from 1 to ${AUDIT_PAGE_SIZE_MAX}`)
    .max(AUDIT_PAGE_SIZE_MAX, `pageSize must be a whole number from 1 to ${AUDIT_PAGE_SIZE_MAX}`)
    .default(50),
});
/** The query as a client builds it: every field optional. */
export type AuditQuery = Partial<z.output<typeof auditQuerySchema>>;

/** One row of the audit trail as a monitor reads it. */
export const auditEntrySchema = z.object({
  sequence: z.number().int(),
  /** ISO 8601 UTC. */
  at: z.string(),
  user: z.object({
    id: z.string(),
    /** Display name; "Tidemark (system)" for changes no person made. */
    name: z.string(),
    /** The role the person acted in, or `system`. */
    role: z.string(),
  }),
  siteId: z.string().nullable(),
  siteNumber: z.string().nullable(),
  entity: z.string(),
  entityId: z.string(),
  action: z.string(),
  /** The stored JSON, parsed; null when there was none (a creation has no old value). */
  oldValue: z.unknown(),
  newValue: z.unknown(),
  reason: z.string().nullable(),
  /** Paths (`newValue.treatmentArm`) whose values were withheld because monitors are blinded. */
  withheld: z.array(z.string()),
});
export type AuditEntry = z.infer<typeof auditEntrySchema>;

/** What blinding did to the page: whether the study blinds monitors and whether that applied to the caller. */
export const auditBlindingSchema = z.object({
  monitorsBlinded: z.boolean(),
  /** Whether the caller holds the monitor role in the study, so the monitor's blinding applies. */
  appliesToYou: z.boolean(),
  note: z.string(),
});

export const auditPageSchema = z.object({
  items: z.array(auditEntrySchema),
  total: z.number().int(),
  page: z.number().int(),
  pageSize: z.number().int(),
  blinding: auditBlindingSchema,
});
export type AuditPage = z.infer<typeof auditPageSchema>;

/** `GET .../audit/filter-options`: the values present in the study's trail, for the filter fields. */
export const auditFilterOptionsSchema = z.object({
  sites: z.array(z.object({ id: z.string(), number: z.string(), name: z.string() })),
  users: z.array(z.object({ id: z.string(), name: z.string() })),
  entities: z.array(z.string()),
  actions: z.array(z.string()),
});
export type AuditFilterOptions = z.infer<typeof auditFilterOptionsSchema>;

/** `POST .../audit/verify`: the whole chain walked from its first row; the first broken row is named. */
export const chainVerificationResultSchema = z.object({
  ok: z.boolean(),
  rowsChecked: z.number().int(),
  firstBreak: z.object({ sequence: z.number().int(), problem: z.string() }).nullable(),
  elapsedMs: z.number(),
  /** ISO 8601 UTC. */
  verifiedAt: z.string(),
});
export type ChainVerificationResult = z.infer<typeof chainVerificationResultSchema>;

/** Counts per grade A-F and U. */
const count = z.number().int();
export const gradeCountsSchema = z.object({ A: count, B: count, C: count, D: count, E: count, F: count, U: count });
export type GradeCounts = z.infer<typeof gradeCountsSchema>;

/** Verdicts on efforts for one measure (FEV1 or FVC). */
export const verdictCountsSchema = z.object({
  acceptable: z.number().int(),
  usable: z.number().int(),
  notAcceptable: z.number().int(),
  /** Percent of efforts acceptable; null without efforts. */
  acceptablePercent: z.number().nullable(),
});
export type VerdictCounts = z.infer<typeof verdictCountsSchema>;

/** Acceptability of efforts, FEV1 and FVC. */
export const acceptabilitySchema = z.object({
  efforts: z.number().int(),
  fev1: verdictCountsSchema,
  fvc: verdictCountsSchema,
});
export type Acceptability = z.infer<typeof acceptabilitySchema>;

/** One site's performance. Times are hours, ages days; percentages 0-100. */
export const sitePerformanceSchema = z.object({
  siteId: z.string(),
  siteNumber: z.string(),
  siteName: z.string(),
  sessions: z.object({
    total: z.number().int(),
    awaitingFile: z.number().int(),
    /** Sessions whose file was checked (checked, in reading, in adjudication or final). */
    checked: z.number().int(),
    /** Sessions whose last file was rejected. */
    rejected: z.number().int(),
    filesReceived: z.number().int(),
    filesRejected: z.number().int(),
  }),
  /** The engine's suggested verdicts on the efforts of each session's current file. */
  engineAcceptability: acceptabilitySchema,
  /** The final over-reads' verdicts; zero efforts while no read is final. */
  readerAcceptability: acceptabilitySchema,
  grades: z.object({
    fev1: gradeCountsSchema,
    fvc: gradeCountsSchema,
    /** Sessions graded by their final read; the rest by the engine. */
    fromFinalReads: z.number().int(),
    fromEngine: z.number().int(),
  }),
  /** From the receipt of the session's current file to the release of its feedback. */
  turnaround: z.object({
    sessions: z.number().int(),
    medianHours: z.number().nullable(),
    p90Hours: z.number().nullable(),
    /** Percent of those sessions within the study's turnaround target. */
    withinTargetPercent: z.number().nullable(),
  }),
  /** Queries not closed yet (open or answered), with their age. */
  openQueries: z.object({
    count: z.number().int(),
    oldestAgeDays: z.number().nullable(),
    medianAgeDays: z.number().nullable(),
  }),
  calibration: z.object({
    checks: z.number().int(),
    withinTolerance: z.number().int(),
    compliancePercent: z.number().nullable(),
    lastCheckedAt: z.string().nullable(),
    daysSinceLastCheck: z.number().nullable(),
  }),
});
export type SitePerformance = z.infer<typeof sitePerformanceSchema>;

export const sitePerformanceReportSchema = z.object({
  /** ISO 8601 UTC: the moment ages and "days since" are counted to. */
  generatedAt: z.string(),
  turnaroundTargetHours: z.number(),
  sites: z.array(sitePerformanceSchema),
});
export type SitePerformanceReport = z.infer<typeof sitePerformanceReportSchema>;

/** Agreement on effort verdicts between two independent reads (FEV1 and FVC verdicts pooled). */
export const verdictAgreementSchema = z.object({
  /** Verdicts compared (each effort gives one FEV1 and one FVC verdict). */
  comparedVerdicts: z.number().int(),
  percentAgreement: z.number().nullable(),
  /** Cohen's kappa over the three verdict categories; null when it is undefined. */
  kappa: z.number().nullable(),
});
export type VerdictAgreement = z.infer<typeof verdictAgreementSchema>;

/** One over-reader's performance. */
export const readerPerformanceSchema = z.object({
  readerId: z.string(),
  name: z.string(),
  signedReads: z.number().int(),
  signedByKind: z.object({ first: z.number().int(), second: z.number().int(), adjudication: z.number().int() }),
  inProgress: z.number().int(),
  /** Reads signed in the 30 days before the report. */
  signedLast30Days: z.number().int(),
  /** From claiming the read to signing it. */
  medianReadMinutes: z.number().nullable(),
  /** FEV1 and FVC verdicts given in signed reads. */
  verdicts: z.number().int(),
  /** Verdicts that differ from the engine's suggestion. */
  overrides: z.number().int(),
  overridePercent: z.number().nullable(),
  /** Against the other reader of the same dual-read sessions. */
  agreement: verdictAgreementSchema,
});
export type ReaderPerformance = z.infer<typeof readerPerformanceSchema>;

export const readerPerformanceReportSchema = z.object({
  generatedAt: z.string(),
  readers: z.array(readerPerformanceSchema),
  /** All dual-read sessions with both reads signed. */
  overall: verdictAgreementSchema.extend({ comparedSessions: z.number().int() }),
  /** How agreement and kappa are computed. */
  method: z.string(),
});
export type ReaderPerformanceReport = z.infer<typeof readerPerformanceReportSchema>;

/** The caution that goes with performance figures, on screen and in the export. */
export const PERFORMANCE_CAUTION =
  'These figures describe process quality for oversight; they support, and do not replace, review by qualified staff. ' +
  'Small numbers of sessions give unstable percentages. The protocol, local regulations and licensed practice prevail.';
