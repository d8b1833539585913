import type { LockRepository, DataLockRow } from './lock-repository.js';
import { coveringLock, lockedConflict, type LockTarget } from './lock-scope.js';

/**
 * Refuses writes that would add to or change locked data where no session exists yet to ask
 * (enrolling a subject, registering a session, logging a calibration check). Writes to an
 * existing session go through SessionService.assertWritable, which applies the same rule.
 */
export class LockGuard {
  constructor(private readonly locks: LockRepository) {}

  /** The oldest active lock covering the target, if any. */
  lockOn(target: LockTarget): DataLockRow | undefined {
    return coveringLock(this.locks.activeOfStudy(target.studyId), target);
  }

  /** Throws 409 `locked` with the lock's reason when the target is locked; `what` names it for the message. */
  assertUnlocked(target: LockTarget, what: string): void {
    const lock = this.lockOn(target);
    if (lock) throw lockedConflict(lock, what);
  }
}
