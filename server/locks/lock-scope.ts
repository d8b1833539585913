/**
 * What a data lock covers and what its signatures are bound to. Pure: no database, no clock.
 */
import type { LockScope } from '../../shared/contracts/locks.js';
import { AppError } from '../http/app-error.js';

/** The fields of a stored lock that decide what it covers and what is signed. */
export interface LockRecord {
  readonly id: string;
  readonly studyId: string;
  readonly scope: LockScope;
  readonly scopeId: string;
  readonly reason: string;
  readonly lockedBy: string;
  readonly lockedAt: string;
  readonly unlockedBy: string | null;
  readonly unlockedAt: string | null;
  readonly unlockReason: string | null;
}

/**
 * Where a write would land. Coordinates left out are not known yet (a subject being enrolled has
 * no subject id), so only locks on the coordinates given, and study locks, can cover the write.
 */
export interface LockTarget {
  readonly studyId: string;
  readonly siteId?: string;
  readonly subjectId?: string;
  readonly visitId?: string;
  readonly sessionId?: string;
}

/** Whether the lock still holds. */
export function isActive(lock: Pick<LockRecord, 'unlockedAt'>): boolean {
  return lock.unlockedAt === null;
}

/** Whether an active lock covers a write to the target. */
export function lockCovers(lock: Pick<LockRecord, 'studyId' | 'scope' | 'scopeId' | 'unlockedAt'>, target: LockTarget): boolean {
  if (!isActive(lock) || lock.studyId !== target.studyId) return false;
  switch (lock.scope) {
    case 'study':
      return true;
    case 'site':
      return lock.scopeId === target.siteId;
    case 'subject':
      return lock.scopeId === target.subjectId;
    case 'visit':
      return lock.scopeId === target.visitId;
    case 'session':
      return lock.scopeId === target.sessionId;
  }
}

/** The oldest active lock covering the target: the one whose reason a refusal gives. */
export function coveringLock<T extends Pick<LockRecord, 'studyId' | 'scope' | 'scopeId' | 'unlockedAt' | 'lockedAt'>>(
  locks: readonly T[],
  target: LockTarget,
): T | undefined {
  return locks
    .filter((lock) => lockCovers(lock, target))
    .sort((a, b) => a.lockedAt.localeCompare(b.lockedAt))[0];
}

/** Whether an active lock on exactly this scope already exists (a second one would add nothing). */
export function sameActiveLock<T extends Pick<LockRecord, 'studyId' | 'scope' | 'scopeId' | 'unlockedAt'>>(
  locks: readonly T[],
  wanted: Pick<LockRecord, 'studyId' | 'scope' | 'scopeId'>,
): T | undefined {
  return locks.find(
    (lock) => isActive(lock) && lock.studyId === wanted.studyId && lock.scope === wanted.scope && lock.scopeId === wanted.scopeId,
  );
}

/**
 * The content a "locked" signature is bound to (21 CFR 11.70): which data, why, by whom and when.
 * Unlocking later leaves it unchanged, so the lock's signature stays valid after an unlock.
 */
export function lockedContent(lock: LockRecord) {
  return {
    record: 'data-lock',
    id: lock.id,
    studyId: lock.studyId,
    scope: lock.scope,
    scopeId: lock.scopeId,
    reason: lock.reason,
    lockedBy: lock.lockedBy,
    lockedAt: lock.lockedAt,
  };
}

/** The content an "unlocked" signature is bound to: the lock and its unlocking. */
export function unlockedContent(lock: LockRecord) {
  return {
    ...lockedContent(lock),
    unlockedBy: lock.unlockedBy,
    unlockedAt: lock.unlockedAt,
    unlockReason: lock.unlockReason,
  };
}

/** The content a signature of the given meaning on this lock must match; null for meanings a lock never carries. */
export function signedContentFor(lock: LockRecord, meaning: string): object | null {
  if (meaning === 'locked') return lockedContent(lock);
  if (meaning === 'unlocked') return unlockedContent(lock);
  return null;
}

/**
 * Whether the signatures attached to a lock are what they must be: one valid "locked", one valid
 * "unlocked" once unlocked, and nothing attached that fails its content check.
 */
export function signaturesComplete(lock: Pick<LockRecord, 'unlockedAt'>, signatures: readonly { meaning: string; valid: boolean }[]): boolean {
  const validOf = (meaning: string) => signatures.some((signature) => signature.meaning === meaning && signature.valid);
  return signatures.every((signature) => signature.valid) && validOf('locked') && (isActive(lock) || validOf('unlocked'));
}

/** The 409 every write to locked data answers: what is locked, since when and why; nothing was changed. */
export function lockedConflict(lock: Pick<LockRecord, 'id' | 'scope' | 'reason' | 'lockedAt'>, what: string): AppError {
  return AppError.conflict(
    `The data of ${what} is locked (${lock.scope} lock since ${lock.lockedAt}: ${lock.reason}); nothing was changed.`,
    { lockId: lock.id, scope: lock.scope, reason: lock.reason, lockedAt: lock.lockedAt },
    'locked',
  );
}
