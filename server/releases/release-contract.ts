/**
 * Request and response shapes of the release routes. Kept beside the server feature until the
 * web client needs them; then they move to shared/contracts/releases.ts unchanged.
 */
import * as z from 'zod';
import { releaseManifestSchema } from './manifest.js';

const code = z.string().trim().min(1).max(64);

/** `POST /api/studies/:studyId/releases`. */
export const releaseRequestSchema = z.object({
  /** Part of the study to release; the whole study when absent. */
  scope: z
    .object({
      siteIds: z.array(code).min(1).max(500).optional(),
      visitCodes: z.array(code).min(1).max(200).optional(),
    })
    .optional(),
  reason: z.string().trim().max(500).optional(),
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

/** One release as listed. */
export const releaseSummarySchema = z.object({
  releaseId: z.string(),
  status: releaseStatusSchema,
  requestedAt: z.string(),
  requestedBy: z.string(),
  reason: z.string().nullable(),
  scope: z.object({ siteIds: z.array(z.string()).nullable(), visitCodes: z.array(z.string()).nullable() }),
  dataCutAt: z.string(),
  sessionCount: z.number().int(),
  completedAt: z.string().nullable(),
  manifestSha256: z.string().nullable(),
  files: z.array(z.object({ name: z.string(), sizeBytes: z.number().int(), sha256: z.string() })),
  error: z.string().nullable(),
});
export type ReleaseSummary = z.infer<typeof releaseSummarySchema>;

/** `POST` answer: the release as accepted, with the job's progress. */
export const releaseAcceptedSchema = z.object({
  release: releaseSummarySchema,
  progress: releaseProgressSchema,
  progressUrl: z.string(),
});

const fileCheckSchema = z.object({
  name: z.string(),
  status: z.enum(['intact', 'tampered', 'missing']),
  expectedSha256: z.string(),
  actualSha256: z.string().nullable(),
  expectedSizeBytes: z.number().int(),
  actualSizeBytes: z.number().int().nullable(),
});

/** The result of verifying a stored release against the audit trail, its signature and its manifest. */
export const releaseVerificationSchema = z.object({
  ok: z.boolean(),
  manifest: z.enum(['intact', 'forged', 'unreadable', 'missing']),
  signature: z.enum(['valid', 'invalid', 'missing']),
  files: z.array(fileCheckSchema),
  problems: z.array(z.string()),
  checkedAt: z.string(),
});

/** `GET .../releases/:releaseId`: the release, its manifest as stored (null when unreadable) and the verification. */
export const releaseDetailSchema = z.object({
  release: releaseSummarySchema,
  manifest: releaseManifestSchema.nullable(),
  verification: releaseVerificationSchema.nullable(),
});
export type ReleaseDetail = z.infer<typeof releaseDetailSchema>;
