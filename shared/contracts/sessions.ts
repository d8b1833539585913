import * as z from 'zod';

/**
 * Plausible demographics at test for an adult or paediatric trial subject. Outside these a
 * value is far more likely a typing mistake (inches for cm, months for years) than a subject.
 * Common practice; the GLI-2012 equations themselves cover ages 3-95 years (Quanjer et al. 2012).
 */
export const DEMOGRAPHIC_LIMITS = {
  ageYears: { min: 3, max: 100 },
  heightCm: { min: 80, max: 230 },
  weightKg: { min: 10, max: 300 },
} as const;

function withinLimits(name: string, unit: string, limits: { min: number; max: number }) {
  return z
    .number({ error: `${name} must be a number (${unit})` })
    .refine((value) => value >= limits.min && value <= limits.max, {
      error: (issue) => `${name} ${String(issue.input)} ${unit} is outside the plausible range ${limits.min}-${limits.max} ${unit}`,
    });
}

export const ethnicitySchema = z.enum([
  'caucasian',
  'african-american',
  'north-east-asian',
  'south-east-asian',
  'other',
  'mexican-american',
]);

/** Demographics at the time of the test. */
export const testDemographicsSchema = z.object({
  ageYears: withinLimits('Age', 'years', DEMOGRAPHIC_LIMITS.ageYears),
  heightCm: withinLimits('Height', 'cm', DEMOGRAPHIC_LIMITS.heightCm),
  weightKg: withinLimits('Weight', 'kg', DEMOGRAPHIC_LIMITS.weightKg).nullable().optional(),
  sex: z.enum(['female', 'male'], { error: 'Sex must be female or male' }),
  ethnicity: ethnicitySchema.nullable().optional(),
});
export type TestDemographics = z.infer<typeof testDemographicsSchema>;

const code = z.string().trim().min(1, 'must not be empty').max(64, 'must be at most 64 characters');

export const bronchodilatorSchema = z.enum(['pre', 'post']);

/** Where a session stands on its way to a released dataset; later stages come with reading and locks. */
export const sessionStatusSchema = z.enum([
  /** Registered, waiting for its file. */
  'awaiting-file',
  /** File parsed and the engine's first pass stored: ready for the over-read. */
  'checked',
  /** The last file could not be used; the reasons are listed and the file is kept. */
  'rejected',
  /** At least one over-read is under way or signed, and the final read is not there yet. */
  'in-reading',
  /** Two reads disagree; an adjudicator decides. */
  'adjudication',
  /** The final read is signed; its feedback goes to the site. */
  'final',
]);
export type SessionStatus = z.infer<typeof sessionStatusSchema>;

/** `POST .../sites/:siteId/sessions`: registers a session before (or with) its file. */
export const registerSessionSchema = z.object({
  subjectCode: code,
  visitCode: code,
  timepointCode: code,
  bronchodilator: bronchodilatorSchema,
  /** When the test was done, ISO 8601 with offset; stored in UTC beside the site's time zone. */
  testedAt: z.iso.datetime({ offset: true, error: 'testedAt must be an ISO 8601 date-time with offset' }),
  demographics: testDemographicsSchema,
  technicianCode: code,
  device: z
    .object({
      manufacturer: z.string().trim().max(100).optional(),
      model: z.string().trim().max(100).optional(),
      serialNumber: z.string().trim().max(100).optional(),
    })
    .optional(),
});
export type RegisterSession = z.infer<typeof registerSessionSchema>;

/** `PATCH .../sessions/:sessionId`: corrections to registration data, with a reason once a file exists. */
export const correctSessionSchema = z.object({
  bronchodilator: bronchodilatorSchema.optional(),
  demographics: testDemographicsSchema.optional(),
  technicianCode: code.optional(),
  testedAt: z.iso.datetime({ offset: true }).optional(),
  reason: z.string().trim().min(3, 'give a reason of at least 3 characters').max(500).optional(),
});
export type CorrectSession = z.infer<typeof correctSessionSchema>;

export const uploadFormatSchema = z.enum(['effort-csv', 'effort-zip', 'tidemark-session-json', 'fhir-bundle']);

/** One received file: stored byte for byte before anything was parsed. */
export const uploadSchema = z.object({
  id: z.string(),
  sessionId: z.string(),
  originalName: z.string(),
  sizeBytes: z.number().int(),
  sha256: z.string(),
  detectedFormat: uploadFormatSchema.nullable(),
  uploadedBy: z.string(),
  receivedAt: z.string(),
  outcome: z.enum(['checked', 'rejected']),
  /** Every reason the file could not be used (empty when checked). */
  errors: z.array(z.string()),
  processedAt: z.string(),
});
export type Upload = z.infer<typeof uploadSchema>;

export const verdictSchema = z.enum(['acceptable', 'usable', 'not_acceptable']);
export const gradeSchema = z.enum(['A', 'B', 'C', 'D', 'E', 'F', 'U']);

export const findingSchema = z.object({
  code: z.string(),
  message: z.string(),
  values: z.record(z.string(), z.number()),
});

/** The engine's first pass over one effort (suggestions for the reader, who decides). */
export const effortSummarySchema = z.object({
  id: z.string(),
  index: z.number().int(),
  label: z.string(),
  signal: z.enum(['volume', 'flow']),
  sampleRateHz: z.number(),
  timeZeroS: z.number(),
  bevL: z.number(),
  fev1L: z.number().nullable(),
  fvcL: z.number(),
  fev6L: z.number().nullable(),
  pefLPerS: z.number(),
  fef2575LPerS: z.number().nullable(),
  fetS: z.number(),
  endOfTestMet: z.boolean(),
  suggestedFev1Verdict: verdictSchema,
  suggestedFvcVerdict: verdictSchema,
  findings: z.array(findingSchema),
  /** Why each suggested verdict is not "acceptable", in plain words. */
  verdictReasons: z.object({ fev1: z.array(z.string()), fvc: z.array(z.string()) }),
});
export type EffortSummary = z.infer<typeof effortSummarySchema>;

/** The engine's session-level first pass. */
export const sessionCheckSchema = z.object({
  protocolId: z.string(),
  protocolVersion: z.number(),
  fev1Grade: gradeSchema,
  fvcGrade: gradeSchema,
  reportedFev1L: z.number().nullable(),
  reportedFvcL: z.number().nullable(),
  fev1FvcRatio: z.number().nullable(),
  notes: z.array(z.string()),
});
export type SessionCheck = z.infer<typeof sessionCheckSchema>;

/** A session as a site, data manager or monitor sees it in lists. */
export const sessionSummarySchema = z.object({
  id: z.string(),
  studyId: z.string(),
  siteId: z.string(),
  siteNumber: z.string(),
  subjectCode: z.string(),
  visitCode: z.string(),
  timepointCode: z.string(),
  bronchodilator: bronchodilatorSchema,
  testedAt: z.string(),
  timeZone: z.string(),
  status: sessionStatusSchema,
  fev1Grade: gradeSchema.nullable(),
  fvcGrade: gradeSchema.nullable(),
  effortCount: z.number().int(),
  registeredAt: z.string(),
  updatedAt: z.string(),
  locked: z.boolean(),
});
export type SessionSummary = z.infer<typeof sessionSummarySchema>;

/** One session in full for the site desk: registration, files, the engine's checks. */
export const sessionDetailSchema = sessionSummarySchema.extend({
  demographics: testDemographicsSchema,
  technicianCode: z.string(),
  device: z.object({
    manufacturer: z.string().nullable(),
    model: z.string().nullable(),
    serialNumber: z.string().nullable(),
  }),
  registeredBy: z.string(),
  /** Reasons the last file was rejected (empty otherwise). */
  rejectionReasons: z.array(z.string()),
  check: sessionCheckSchema.nullable(),
  efforts: z.array(effortSummarySchema),
  uploads: z.array(uploadSchema),
  lock: z.object({ reason: z.string(), lockedAt: z.string(), scope: z.string() }).nullable(),
});
export type SessionDetail = z.infer<typeof sessionDetailSchema>;

/** The answer to an upload: the file as received and the session after the check. */
export const uploadResultSchema = z.object({
  upload: uploadSchema,
  session: sessionDetailSchema,
});
export type UploadResult = z.infer<typeof uploadResultSchema>;

export const sessionSortSchema = z.enum(['testedAt', 'registeredAt', 'updatedAt', 'subjectCode', 'visitCode', 'status', 'siteNumber']);

/** Query of the session list: filters, sort and page, all applied by the server. */
export const sessionListQuerySchema = z.object({
  siteId: z.string().optional(),
  status: sessionStatusSchema.optional(),
  subjectCode: z.string().trim().max(64).optional(),
  visitCode: z.string().trim().max(64).optional(),
  sort: sessionSortSchema.default('registeredAt'),
  direction: z.enum(['asc', 'desc']).default('desc'),
  page: z.coerce.number().int().min(0).default(0),
  pageSize: z.coerce.number().int().min(1).max(200).default(25),
});
export type SessionListQuery = z.input<typeof sessionListQuerySchema>;
export type SessionListFilters = z.output<typeof sessionListQuerySchema>;

export const sessionPageSchema = z.object({
  items: z.array(sessionSummarySchema),
  total: z.number().int(),
  page: z.number().int(),
  pageSize: z.number().int(),
});
export type SessionPage = z.infer<typeof sessionPageSchema>;

/** Ready-to-plot curves of every effort of a session, from the stored original. */
export const sessionCurvesSchema = z.object({
  efforts: z.array(
    z.object({
      index: z.number().int(),
      label: z.string(),
      timeS: z.array(z.number()),
      volumeL: z.array(z.number()),
      flowLPerS: z.array(z.number()),
      backExtrapolation: z.object({ timeS: z.array(z.number()), volumeL: z.array(z.number()) }),
    }),
  ),
});
export type SessionCurves = z.infer<typeof sessionCurvesSchema>;

export const subjectSchema = z.object({
  id: z.string(),
  siteId: z.string(),
  code: z.string(),
  enrolledAt: z.string(),
});
export type Subject = z.infer<typeof subjectSchema>;

export const enrolSubjectSchema = z.object({
  code: z
    .string()
    .trim()
    .regex(/^[A-Za-z0-9][A-Za-z0-9-]{1,31}$/, 'A subject code is 2-32 letters, digits or hyphens (a pseudonymous code, never a name)'),
});

export const visitSchema = z.object({
  code: z.string(),
  name: z.string(),
  dayOffset: z.number().int(),
  windowBeforeDays: z.number().int(),
  windowAfterDays: z.number().int(),
});
export const timepointSchema = z.object({
  code: z.string(),
  name: z.string(),
});
export const scheduleSchema = z.object({
  visits: z.array(visitSchema),
  timepoints: z.array(timepointSchema),
});
export type Schedule = z.infer<typeof scheduleSchema>;

/** A calibration (3-L syringe) check of a site's spirometer. */
export const calibrationCheckEntrySchema = z.object({
  deviceSerialNumber: z.string().trim().min(1, 'give the device serial number').max(100),
  syringeVolumeL: z.number().positive().max(10),
  measuredVolumeL: z.number().positive().max(10),
  checkedAt: z.iso.datetime({ offset: true, error: 'checkedAt must be an ISO 8601 date-time with offset' }),
});
export const calibrationCheckRecordSchema = calibrationCheckEntrySchema.extend({
  id: z.string(),
  siteId: z.string(),
  errorPercent: z.number(),
  withinTolerance: z.boolean(),
  toleranceText: z.string(),
  source: z.enum(['entered', 'upload']),
  enteredBy: z.string(),
  enteredAt: z.string(),
});
export type CalibrationCheckRecord = z.infer<typeof calibrationCheckRecordSchema>;

/** A message Tidemark sent to the user, also listed in the app. */
export const userMessageSchema = z.object({
  id: z.string(),
  subject: z.string(),
  body: z.string(),
  link: z.string().nullable(),
  createdAt: z.string(),
  delivery: z.enum(['pending', 'sent', 'failed']),
});
export type UserMessage = z.infer<typeof userMessageSchema>;
