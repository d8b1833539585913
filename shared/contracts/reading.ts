import * as z from 'zod';
import { bronchodilatorSchema, findingSchema, gradeSchema, verdictSchema } from './sessions.js';

/**
 * Contracts of the reading room. Everything a reader receives is blinded by the server: a
 * per-read code instead of site, subject, dates, technician, device, file names, treatment,
 * other readers' verdicts or the site's own selections. Visit, timepoint and pre/post are
 * shown only where the study's blinding options allow.
 */

export const readKindSchema = z.enum(['first', 'second', 'adjudication']);
export type ReadKind = z.infer<typeof readKindSchema>;

export const signatureMeaningSchema = z.enum(['authored', 'reviewed', 'approved', 'locked', 'unlocked', 'released']);
export type SignatureMeaning = z.infer<typeof signatureMeaningSchema>;

/** A signature as shown with the signed record (21 CFR 11.50): printed name, UTC time, meaning. */
export const signatureManifestationSchema = z.object({
  printedName: z.string(),
  meaning: signatureMeaningSchema,
  signedAt: z.string(),
  /** False when the record changed after signing (its content hash no longer matches). */
  valid: z.boolean(),
});
export type SignatureManifestation = z.infer<typeof signatureManifestationSchema>;

/** What the queue shows of a session waiting for a read: no identity, only what the blinding allows. */
export const queueItemSchema = z.object({
  /** Opaque token to claim this item; differs per reader, so it cannot link sessions across readers. */
  queueToken: z.string(),
  kind: readKindSchema,
  visitCode: z.string().nullable(),
  timepointCode: z.string().nullable(),
  bronchodilator: bronchodilatorSchema.nullable(),
  effortCount: z.number().int(),
  dueAt: z.string(),
  overdue: z.boolean(),
});
export type QueueItem = z.infer<typeof queueItemSchema>;

export const queuePageSchema = z.object({
  items: z.array(queueItemSchema),
  total: z.number().int(),
  turnaroundHours: z.number(),
});
export type QueuePage = z.infer<typeof queuePageSchema>;

export const claimSchema = z.object({ queueToken: z.string().min(1) });

/** One effort as the reader sees it: engine metrics, findings and suggestions; labels are "Effort n". */
export const readEffortSchema = z.object({
  index: z.number().int(),
  label: z.string(),
  metrics: z.record(z.string(), z.unknown()),
  findings: z.array(findingSchema),
  suggestedFev1Verdict: verdictSchema,
  suggestedFvcVerdict: verdictSchema,
  verdictReasons: z.object({ fev1: z.array(z.string()), fvc: z.array(z.string()) }),
});

/** The reader's judgement of one effort. */
export const effortVerdictSchema = z.object({
  effortIndex: z.number().int().min(0),
  fev1Verdict: verdictSchema,
  fvcVerdict: verdictSchema,
  /** Finding codes the reader confirms or adds (ours, see /api/formats/finding-codes). */
  findings: z.array(z.string().max(64)).max(30),
  comment: z.string().max(2000),
});
export type EffortVerdict = z.infer<typeof effortVerdictSchema>;

/** The result that follows from the verdicts (same engine rules, recomputed by the server). */
export const readResultSchema = z.object({
  fev1Grade: gradeSchema,
  fvcGrade: gradeSchema,
  reportedFev1L: z.number().nullable(),
  reportedFvcL: z.number().nullable(),
  fev1FvcRatio: z.number().nullable(),
  fev1EffortIndex: z.number().int().nullable(),
  fvcEffortIndex: z.number().int().nullable(),
  endpointEligible: z.object({ fev1: z.boolean(), fvc: z.boolean(), reasons: z.array(z.string()) }),
});
export type ReadResult = z.infer<typeof readResultSchema>;

/** Everything the reader's workspace needs for one read. */
export const readWorkspaceSchema = z.object({
  readId: z.string(),
  blindCode: z.string(),
  kind: readKindSchema,
  status: z.enum(['in-progress', 'withdrawn', 'signed']),
  version: z.number().int(),
  dueAt: z.string(),
  visitCode: z.string().nullable(),
  timepointCode: z.string().nullable(),
  bronchodilator: bronchodilatorSchema.nullable(),
  /** Demographics the grading and predicted values need (no identity). */
  ageYears: z.number(),
  heightCm: z.number(),
  sex: z.enum(['female', 'male']),
  /** The study's protocol rule set as JSON, so the browser recomputes grades with the shared engine. */
  protocolRuleSet: z.unknown(),
  efforts: z.array(readEffortSchema),
  verdicts: z.array(effortVerdictSchema),
  feedbackText: z.string(),
  result: readResultSchema,
  signature: signatureManifestationSchema.nullable(),
});
export type ReadWorkspace = z.infer<typeof readWorkspaceSchema>;

/** `PUT .../reads/:readId`: the whole draft, with the version it was based on. */
export const saveReadSchema = z.object({
  version: z.number().int().min(1),
  verdicts: z.array(effortVerdictSchema).max(50),
  feedbackText: z.string().max(5000),
});
export type SaveRead = z.infer<typeof saveReadSchema>;

/** `POST .../reads/:readId/sign`. */
export const signReadSchema = z.object({
  version: z.number().int().min(1),
  meaning: z.literal('authored'),
});

/** A read in the reader's own list. */
export const myReadSchema = z.object({
  readId: z.string(),
  blindCode: z.string(),
  kind: readKindSchema,
  status: z.enum(['in-progress', 'withdrawn', 'signed']),
  dueAt: z.string(),
  signedAt: z.string().nullable(),
});

/** Two reads side by side for the adjudicator; readers are "Read A" and "Read B", never named. */
export const adjudicationViewSchema = z.object({
  workspace: readWorkspaceSchema,
  compared: z.array(
    z.object({
      label: z.string(),
      verdicts: z.array(effortVerdictSchema),
      result: readResultSchema,
      feedbackText: z.string(),
    }),
  ),
  /** Where the two reads differ, in plain words. */
  differences: z.array(z.string()),
});
export type AdjudicationView = z.infer<typeof adjudicationViewSchema>;

/** Agreement between readers of a study (monitor, data manager, admin). */
export const agreementSchema = z.object({
  comparedSessions: z.number().int(),
  comparedEfforts: z.number().int(),
  /** Percent of effort verdicts (FEV1 and FVC) on which both reads agree. */
  percentAgreement: z.number().nullable(),
  /** Cohen's kappa on effort verdicts (three categories). */
  kappa: z.number().nullable(),
  gradeAgreementPercent: z.number().nullable(),
  pairs: z.array(
    z.object({
      readerA: z.string(),
      readerB: z.string(),
      comparedEfforts: z.number().int(),
      percentAgreement: z.number().nullable(),
      kappa: z.number().nullable(),
    }),
  ),
});
export type Agreement = z.infer<typeof agreementSchema>;

/** A query to the site about a session. */
export const openQuerySchema = z.object({
  question: z.string().trim().min(5, 'write the question in at least 5 characters').max(4000),
  /** Whether the site is asked to repeat the test within the visit window. */
  requestRepeat: z.boolean().default(false),
});
export const answerQuerySchema = z.object({ body: z.string().trim().min(2).max(4000) });

export const queryMessageSchema = z.object({
  id: z.string(),
  /** "Site", "Over-reader", "Data manager": readers never see names, and sites never see the reader's. */
  authorLabel: z.string(),
  body: z.string(),
  createdAt: z.string(),
});
export const querySchema = z.object({
  id: z.string(),
  status: z.enum(['open', 'answered', 'closed']),
  question: z.string(),
  requestRepeat: z.boolean(),
  openedByLabel: z.string(),
  openedAt: z.string(),
  closedAt: z.string().nullable(),
  messages: z.array(queryMessageSchema),
  /** For site, data-manager and monitor views only; null for readers. */
  sessionId: z.string().nullable(),
  subjectCode: z.string().nullable(),
  siteNumber: z.string().nullable(),
});
export type Query = z.infer<typeof querySchema>;

/** The final over-read as the site receives it. */
export const siteFeedbackSchema = z.object({
  sessionId: z.string(),
  releasedAt: z.string(),
  result: readResultSchema,
  feedbackText: z.string(),
  /** Plain words for the whole session (repeatability, endpoint), beside the reader's own text. */
  sessionCoaching: z.array(z.string()),
  efforts: z.array(
    z.object({
      index: z.number().int(),
      label: z.string(),
      fev1Verdict: verdictSchema,
      fvcVerdict: verdictSchema,
      /** Plain words: what went wrong and what to coach next time. */
      coaching: z.array(z.string()),
      comment: z.string(),
    }),
  ),
  signature: signatureManifestationSchema,
  caution: z.string(),
});
export type SiteFeedback = z.infer<typeof siteFeedbackSchema>;
