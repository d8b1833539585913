/**
 * Request and response shapes of the locked-dataset release routes and the stored release
 * manifest, shared by the server and the data office's pages.
 */
import * as z from 'zod';

const code = z.string().trim().min(1).max(64);

/** The longest reason a release request may carry. */
export const MAX_RELEASE_REASON_LENGTH = 500;

/** `POST /api/studies/:studyId/releases`. */
export const releaseRequestSchema = z.object({
  /** Part of the study to release; the whole study when absent. */
  scope: z
    .object({
      siteIds: z.array(code).min(1).max(500).optional(),
      visitCodes: z.array(code).min(1).max(200).optional(),
    })
    .optional(),
  reason: z.string().trim().max(MAX_RELEASE_REASON_LENGTH).optional(),
});
export type ReleaseRequest = z.infer<typeof releaseRequestSchema>;

export const releaseStatusSchema = z.enum(['running', 'complete', 'failed', 'interrupted']);
export type ReleaseStatus = z.infer<typeof releaseStatusSchema>;

/** Where a release job stands; poll it while it runs. */
export const releaseProgressSchema = z.object({
  releaseId: z.string(),
  status: releaseStatusSchema,
  /** What the job is doing now, in words. */
  phase: z.string(),
  percent: z.number().min(0).max(100),
  startedAt: z.string(),
  finishedAt: z.string().nullable(),
  elapsedMs: z.number(),
  sessionCount: z.number().int(),
  error: z.string().nullable(),
});
export type ReleaseProgress = z.infer<typeof releaseProgressSchema>;

/** Sites (by id) and visits (by code) of a release; null means all. */
export const releaseScopeSchema = z.object({
  siteIds: z.array(z.string()).nullable(),
  visitCodes: z.array(z.string()).nullable(),
});
export type ReleaseScope = z.infer<typeof releaseScopeSchema>;

/** The signature over a release order (21 CFR 11.50: printed name, UTC time, meaning). */
export const releaseSignatureSchema = z.object({
  signatureId: z.string(),
  printedName: z.string(),
  meaning: z.literal('released'),
  signedAt: z.string(),
});
export type ReleaseSignature = z.infer<typeof releaseSignatureSchema>;

/** One release as listed. `requestedBy` is the printed name of who signed the release order. */
export const releaseSummarySchema = z.object({
  releaseId: z.string(),
  status: releaseStatusSchema,
  requestedAt: z.string(),
  requestedBy: z.string(),
  /** The signature of the release order; null only when its row cannot be found. */
  signature: releaseSignatureSchema.nullable(),
  reason: z.string().nullable(),
  scope: releaseScopeSchema,
  dataCutAt: z.string(),
  sessionCount: z.number().int(),
  completedAt: z.string().nullable(),
  manifestSha256: z.string().nullable(),
  files: z.array(z.object({ name: z.string(), sizeBytes: z.number().int(), sha256: z.string() })),
  error: z.string().nullable(),
});
export type ReleaseSummary = z.infer<typeof releaseSummarySchema>;

export const releaseListSchema = z.array(releaseSummarySchema);

/** `POST` answer: the release as accepted, with the job's progress. */
export const releaseAcceptedSchema = z.object({
  release: releaseSummarySchema,
  progress: releaseProgressSchema,
  progressUrl: z.string(),
});
export type ReleaseAccepted = z.infer<typeof releaseAcceptedSchema>;

export const MANIFEST_FORMAT = 'tidemark-release-manifest/1';

/** What the data manager signs: which locked data, cut when, and a fingerprint of it. */
export const releaseOrderSchema = z.object({
  releaseId: z.string(),
  studyId: z.string(),
  studyCode: z.string(),
  scope: releaseScopeSchema,
  reason: z.string().nullable(),
  dataCutAt: z.string(),
  /** SHA-256 over the released sessions, their final reads and versions. */
  dataFingerprint: z.string(),
  sessionCount: z.number().int(),
  requestedBy: z.object({ userId: z.string(), printedName: z.string() }),
});
export type ReleaseOrder = z.infer<typeof releaseOrderSchema>;

export const manifestFileSchema = z.object({
  name: z.string(),
  contentType: z.string(),
  sizeBytes: z.number().int().nonnegative(),
  sha256: z.string().regex(/^[0-9a-f]{64}$/),
});
export type ManifestFile = z.infer<typeof manifestFileSchema>;

/** The manifest stored beside the files: the signed order, the signature and every file with its SHA-256. */
export const releaseManifestSchema = z.object({
  format: z.literal(MANIFEST_FORMAT),
  order: releaseOrderSchema,
  signature: releaseSignatureSchema,
  study: z.object({ code: z.string(), title: z.string(), sponsor: z.string() }),
  /** Latest change in the released data (ISO UTC): the date inside the transport files. */
  dataAsOf: z.string(),
  completedAt: z.string(),
  counts: z.object({ sessions: z.number().int(), efforts: z.number().int(), reRecords: z.number().int() }),
  files: z.array(manifestFileSchema),
  caution: z.string(),
});
export type ReleaseManifest = z.infer<typeof releaseManifestSchema>;

/** What verification found for one file. */
export const fileCheckSchema = z.object({
  name: z.string(),
  status: z.enum(['intact', 'tampered', 'missing']),
  expectedSha256: z.string(),
  actualSha256: z.string().nullable(),
  expectedSizeBytes: z.number().int(),
  actualSizeBytes: z.number().int().nullable(),
});
export type FileCheck = z.infer<typeof fileCheckSchema>;

/** The server's check of a stored release against the audit trail, its signature and its manifest, made when it was read. */
export const releaseVerificationSchema = z.object({
  ok: z.boolean(),
  manifest: z.enum(['intact', 'forged', 'unreadable', 'missing']),
  signature: z.enum(['valid', 'invalid', 'missing']),
  files: z.array(fileCheckSchema),
  /** Every problem in words, empty when ok. */
  problems: z.array(z.string()),
  checkedAt: z.string(),
});
export type ReleaseVerification = z.infer<typeof releaseVerificationSchema>;

/** `GET .../releases/:releaseId`: the release, its manifest as stored (null until complete or when unreadable) and the verification. */
export const releaseDetailSchema = z.object({
  release: releaseSummarySchema,
  manifest: releaseManifestSchema.nullable(),
  verification: releaseVerificationSchema.nullable(),
});
export type ReleaseDetail = z.infer<typeof releaseDetailSchema>;
