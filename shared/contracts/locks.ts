import * as z from 'zod';
import { signatureManifestationSchema } from './reading.js';

/**
 * Contracts of data locks. A data manager locks the data of a session, a subject, a site, a visit
 * (across all subjects) or the whole study with a reason and an electronic signature (meaning
 * "locked"); every write to locked data is then refused with 409 `locked` and the lock's reason.
 * Unlocking needs a reason and a signature (meaning "unlocked"). Open queries block a lock.
 *
 * A study lock freezes clinical data (subjects, sessions, files, efforts, reads, queries, calibration
 * checks), not the administration of the study: people, roles, sites' details, settings and the
 * schedule stay editable, each change audited with its reason.
 */

export const lockScopeSchema = z.enum(['study', 'site', 'subject', 'visit', 'session']);
export type LockScope = z.infer<typeof lockScopeSchema>;

/** Words people read for each scope. */
export const LOCK_SCOPE_LABELS: Record<LockScope, string> = {
  study: 'Whole study',
  site: 'Site',
  subject: 'Subject',
  visit: 'Visit (all subjects)',
  session: 'Session',
};

const reasonSchema = z
  .string()
  .trim()
  .min(3, 'give the reason in at least 3 characters')
  .max(1000, 'keep the reason under 1000 characters');

/**
 * `POST /api/studies/:studyId/locks`. `scopeId` names what is locked, by the identifiers people
 * know: for a site its id or its number ("101"); for a subject its code ("101-001") or id; for a
 * visit its code ("SCR") or id; for a session its id. For the study it may be left out (or be the
 * study's id or code). The server stores the resolved id.
 */
export const createLockSchema = z
  .object({
    scope: lockScopeSchema,
    scopeId: z.string().trim().max(100).optional(),
    reason: reasonSchema,
  })
  .refine((lock) => lock.scope === 'study' || Boolean(lock.scopeId), {
    message: 'name what to lock: a site id or number, a subject code, a visit code or a session id',
    path: ['scopeId'],
  });
export type CreateLock = z.input<typeof createLockSchema>;

/** `POST /api/studies/:studyId/locks/:lockId/unlock`. */
export const unlockSchema = z.object({ reason: reasonSchema });
export type Unlock = z.infer<typeof unlockSchema>;

/** One lock as the data office and the monitor see it, with its signatures (21 CFR 11.50). */
export const lockViewSchema = z.object({
  id: z.string(),
  scope: lockScopeSchema,
  /** The resolved id: site, subject, visit or session id; the study id for a study lock. */
  scopeId: z.string(),
  /** What is locked, in words: "Site 101 (Fjellvik Lung Clinic)", "Subject 101-001 (site 101)"... */
  target: z.string(),
  reason: z.string(),
  lockedBy: z.string(),
  lockedAt: z.string(),
  /** Whether the lock still holds. */
  active: z.boolean(),
  unlockedBy: z.string().nullable(),
  unlockedAt: z.string().nullable(),
  unlockReason: z.string().nullable(),
  /** Every signature attached to this lock, oldest first, each checked against the lock's content now. */
  signatures: z.array(signatureManifestationSchema),
  /**
   * Whether the lock carries a valid "locked" signature (and, once unlocked, a valid "unlocked"
   * one) and no attached signature fails its content check: false shows tampering or a replayed
   * signature.
   */
  signaturesValid: z.boolean(),
});
export type LockView = z.infer<typeof lockViewSchema>;

/** `GET /api/studies/:studyId/locks`: active locks and past (unlocked) ones, newest first. */
export const lockListSchema = z.object({
  active: z.array(lockViewSchema),
  past: z.array(lockViewSchema),
});
export type LockList = z.infer<typeof lockListSchema>;

/** `details` of a 409 `locked` refusal, so a client can show the lock. */
export const lockedDetailsSchema = z.object({
  lockId: z.string(),
  scope: lockScopeSchema,
  reason: z.string(),
  lockedAt: z.string(),
});
