/**
 * The release routes' request and answers as the web client reads them. The server keeps its own
 * copy in server/releases/release-contract.ts and manifest.ts, which src/ may not import (and
 * manifest.ts needs node:crypto); these schemas follow them field for field until both move to
 * shared/contracts/releases.ts. Unknown fields are dropped by zod, so a server that adds one
 * does not break the page.
 */
import * as z from 'zod';

/** `POST /api/studies/:studyId/releases`: sites (by id) and visits (by code); the whole study when absent. */
export interface ReleaseRequest {
  readonly scope?: { readonly siteIds?: string[]; readonly visitCodes?: string[] };
  readonly reason?: string;
}

/** The server's longest release reason. */
export const MAX_RELEASE_REASON_LENGTH = 500;

export const releaseStatusSchema = z.enum(['running', 'complete', 'failed', 'interrupted']);
export type ReleaseStatus = z.infer<typeof releaseStatusSchema>;

/** Where a release job stands. */
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

const releaseScopeSchema = z.object({ siteIds: z.array(z.string()).nullable(), visitCodes: z.array(z.string()).nullable() });
/** Sites (by id) and visits (by code) of a release; null means all. */
export type ReleaseScope = z.infer<typeof releaseScopeSchema>;

/** One release as listed. `requestedBy` is the printed name of who signed the release order. */
export const releaseSummarySchema = z.object({
  releaseId: z.string(),
  status: releaseStatusSchema,
  requestedAt: z.string(),
  requestedBy: z.string(),
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

/** The answer to a release request: the release as accepted and its job's progress. */
export const releaseAcceptedSchema = z.object({
  release: releaseSummarySchema,
  progress: releaseProgressSchema,
  progressUrl: z.string(),
});
export type ReleaseAccepted = z.infer<typeof releaseAcceptedSchema>;

const manifestFileSchema = z.object({
  name: z.string(),
  contentType: z.string(),
  sizeBytes: z.number().int().nonnegative(),
  sha256: z.string(),
});
export type ManifestFile = z.infer<typeof manifestFileSchema>;

/** The stored manifest: the signed release order, the signature (21 CFR 11.50), the files with their SHA-256. */
export const releaseManifestSchema = z.object({
  format: z.string(),
  order: z.object({
    releaseId: z.string(),
    studyId: z.string(),
    studyCode: z.string(),
    scope: releaseScopeSchema,
    reason: z.string().nullable(),
    dataCutAt: z.string(),
    dataFingerprint: z.string(),
    sessionCount: z.number().int(),
    requestedBy: z.object({ userId: z.string(), printedName: z.string() }),
  }),
  signature: z.object({
    signatureId: z.string(),
    printedName: z.string(),
    meaning: z.literal('released'),
    signedAt: z.string(),
  }),
  study: z.object({ code: z.string(), title: z.string(), sponsor: z.string() }),
  dataAsOf: z.string(),
  completedAt: z.string(),
  counts: z.object({ sessions: z.number().int(), efforts: z.number().int(), reRecords: z.number().int() }),
  files: z.array(manifestFileSchema),
  caution: z.string(),
});
export type ReleaseManifest = z.infer<typeof releaseManifestSchema>;

const fileCheckSchema = z.object({
  name: z.string(),
  status: z.enum(['intact', 'tampered', 'missing']),
  expectedSha256: z.string(),
  actualSha256: z.string().nullable(),
  expectedSizeBytes: z.number().int(),
  actualSizeBytes: z.number().int().nullable(),
});
export type FileCheck = z.infer<typeof fileCheckSchema>;

/** The server's check of the stored release against the audit trail, the signature and the manifest, made when it was read. */
export const releaseVerificationSchema = z.object({
  ok: z.boolean(),
  manifest: z.enum(['intact', 'forged', 'unreadable', 'missing']),
  signature: z.enum(['valid', 'invalid', 'missing']),
  files: z.array(fileCheckSchema),
  problems: z.array(z.string()),
  checkedAt: z.string(),
});
export type ReleaseVerification = z.infer<typeof releaseVerificationSchema>;

/** `GET .../releases/:releaseId`: the release, its manifest (null until complete or when unreadable) and the verification. */
export const releaseDetailSchema = z.object({
  release: releaseSummarySchema,
  manifest: releaseManifestSchema.nullable(),
  verification: releaseVerificationSchema.nullable(),
});
export type ReleaseDetail = z.infer<typeof releaseDetailSchema>;
