import { randomUUID } from 'node:crypto';
import type { Role } from '../../shared/contracts/auth.js';
import type { LockList, LockScope, LockView } from '../../shared/contracts/locks.js';
import type { SignatureManifestation } from '../../shared/contracts/reading.js';
import type { AuditTrail } from '../audit/audit-trail.js';
import type { Principal } from '../auth/principal.js';
import { studyActor } from '../http/access.js';
import { AppError } from '../http/app-error.js';
import type { SignatureService } from '../signatures/signature-service.js';
import { LOCK_RECORD_TYPE, type DataLockRow, type LockRepository, type LockSignatureRow } from './lock-repository.js';
import { isActive, lockedContent, sameActiveLock, signaturesComplete, signedContentFor, unlockedContent } from './lock-scope.js';

/** Only a data manager locks and unlocks. */
export const LOCKERS: readonly Role[] = ['data-manager'];

/** The data a lock would cover, as the query count needs it. */
export interface LockScopeRef {
  readonly studyId: string;
  readonly scope: LockScope;
  readonly scopeId: string;
}

/** How many queries inside a scope are not closed (open or answered); QueryService.openQueryCount. */
export type OpenQueryCount = (scope: LockScopeRef) => number;

/** A lock request after validation. */
export interface LockRequest {
  readonly scope: LockScope;
  readonly scopeId?: string;
  readonly reason: string;
}

/** What a lock names, resolved: the stored id, the words people read, and the site for the audit row. */
interface ResolvedTarget {
  readonly scopeId: string;
  readonly words: string;
  readonly siteId: string | null;
}

/**
 * Locks and unlocks data with a reason and an electronic signature (21 CFR 11.50, 11.70, 11.200).
 * Each lock and unlock, its signature and its audit row commit together or not at all.
 */
export class LockService {
  constructor(
    private readonly repository: LockRepository,
    private readonly signatures: SignatureService,
    private readonly openQueryCount: OpenQueryCount,
    private readonly audit: AuditTrail,
    private readonly clock: () => Date,
  ) {}

  /** Active and past locks of the study with their signature manifestations. */
  list(studyId: string): LockList {
    const views = this.views(this.repository.ofStudy(studyId));
    return { active: views.filter((view) => view.active), past: views.filter((view) => !view.active) };
  }

  /**
   * Locks the named data. Refused with 409 `lock-exists` when the same lock is active, 409
   * `open-queries` while queries in the scope are not closed, and 401 `reauthentication-required`
   * when the signer has not entered their password recently; nothing is stored then.
   */
  lock(principal: Principal | undefined, studyId: string, request: LockRequest): LockView {
    const actor = studyActor(principal, studyId, LOCKERS);
    const target = this.resolve(studyId, request.scope, request.scopeId);
    const scopeRef = { studyId, scope: request.scope, scopeId: target.scopeId };
    const row = this.audit.write(actor, (record) => {
      const existing = sameActiveLock(this.repository.activeOfStudy(studyId), scopeRef);
      if (existing) {
        throw AppError.conflict(
          `${target.words} is already locked (since ${existing.lockedAt}: ${existing.reason}); nothing was changed.`,
          { lockId: existing.id },
          'lock-exists',
        );
      }
      const openQueries = this.openQueryCount(scopeRef);
      if (openQueries > 0) {
        throw AppError.conflict(
          `${target.words} has ${openQueries} ${openQueries === 1 ? 'query' : 'queries'} not closed yet (open or answered): ` +
            'close them in the data office before locking. Nothing was locked.',
          { openQueries },
          'open-queries',
        );
      }
      const lock: DataLockRow = {
        id: randomUUID(),
        studyId,
        scope: request.scope,
        scopeId: target.scopeId,
        reason: request.reason,
        lockedBy: actor.userId,
        lockedAt: this.clock().toISOString(),
        unlockedBy: null,
        unlockedAt: null,
        unlockReason: null,
      };
      this.repository.insert(lock);
      const signature = this.signatures.sign(principal!, {
        meaning: 'locked',
        recordType: LOCK_RECORD_TYPE,
        recordId: lock.id,
        content: lockedContent(lock),
      });
      record({
        studyId,
        siteId: target.siteId,
        entity: 'lock',
        entityId: lock.id,
        action: 'lock',
        newValue: { scope: lock.scope, scopeId: lock.scopeId, target: target.words, ...signatureFields(signature) },
        reason: request.reason,
      });
      return lock;
    });
    return this.views([row])[0];
  }

  /** Unlocks with a reason and a signature (meaning "unlocked"); 409 `lock-not-active` when already unlocked. */
  unlock(principal: Principal | undefined, studyId: string, lockId: string, reason: string): LockView {
    const actor = studyActor(principal, studyId, LOCKERS);
    const row = this.audit.write(actor, (record) => {
      const lock = this.repository.find(studyId, lockId);
      if (!lock) throw AppError.notFound('There is no such lock in this study.');
      if (!isActive(lock)) {
        throw AppError.conflict(`This lock was already unlocked at ${lock.unlockedAt}; nothing was changed.`, undefined, 'lock-not-active');
      }
      const change = { unlockedBy: actor.userId, unlockedAt: this.clock().toISOString(), unlockReason: reason };
      this.repository.markUnlocked(lock.id, change);
      const unlocked = { ...lock, ...change };
      const signature = this.signatures.sign(principal!, {
        meaning: 'unlocked',
        recordType: LOCK_RECORD_TYPE,
        recordId: lock.id,
        content: unlockedContent(unlocked),
      });
      const target = this.nameStored(lock);
      record({
        studyId,
        siteId: target.siteId,
        entity: 'lock',
        entityId: lock.id,
        action: 'unlock',
        oldValue: { active: true },
        newValue: { active: false, target: target.words, unlockedAt: change.unlockedAt, ...signatureFields(signature) },
        reason,
      });
      return unlocked;
    });
    return this.views([row])[0];
  }

  private views(locks: readonly DataLockRow[]): LockView[] {
    const signatures = this.repository.signaturesOf(locks.map((lock) => lock.id));
    const names = this.repository.namesOf(locks.flatMap((lock) => [lock.lockedBy, ...(lock.unlockedBy ? [lock.unlockedBy] : [])]));
    return locks.map((lock) => {
      const manifestations = signatures.filter((signature) => signature.recordId === lock.id).map((signature) => this.manifest(lock, signature));
      return {
        id: lock.id,
        scope: lock.scope,
        scopeId: lock.scopeId,
        target: this.nameStored(lock).words,
        reason: lock.reason,
        lockedBy: names.get(lock.lockedBy) ?? lock.lockedBy,
        lockedAt: lock.lockedAt,
        active: isActive(lock),
        unlockedBy: lock.unlockedBy ? (names.get(lock.unlockedBy) ?? lock.unlockedBy) : null,
        unlockedAt: lock.unlockedAt,
        unlockReason: lock.unlockReason,
        signatures: manifestations,
        signaturesValid: signaturesComplete(lock, manifestations),
      };
    });
  }

  /** A signature checked against the content its meaning binds it to on this lock. */
  private manifest(lock: DataLockRow, signature: LockSignatureRow): SignatureManifestation {
    const content = signedContentFor(lock, signature.meaning);
    if (content === null) {
      // A lock carries only "locked" and "unlocked" signatures; any other attached here is out of place.
      return { printedName: signature.printedName, meaning: signature.meaning, signedAt: signature.signedAt, valid: false };
    }
    return this.signatures.manifestation(signature.id, content);
  }

  /** Resolves what a lock request names; 422 `lock-target-unknown` naming what exists otherwise. */
  private resolve(studyId: string, scope: LockScope, given: string | undefined): ResolvedTarget {
    const study = this.requireStudy(studyId);
    const key = given?.trim() || (scope === 'study' ? study.id : '');
    const found = this.lookUp(study, scope, key);
    if (found) return found;
    const unknown = (message: string) => new AppError(422, 'lock-target-unknown', message);
    switch (scope) {
      case 'study':
        throw unknown(`A study lock locks this study (${study.code}); "${key}" names another. Leave the target empty.`);
      case 'site':
        throw unknown(`There is no site "${key}" in this study; its sites are ${this.repository.siteNumbers(studyId).join(', ') || 'none yet'}.`);
      case 'subject':
        throw unknown(`There is no subject "${key}" in this study. Check the subject code.`);
      case 'visit':
        throw unknown(`There is no visit "${key}" in this study's schedule; the visits are ${this.repository.visitCodes(studyId).join(', ')}.`);
      case 'session':
        throw unknown(`There is no session "${key}" in this study. Pick the session from the list.`);
    }
  }

  /** Names a stored lock's data; still readable if the data it named is gone. */
  private nameStored(lock: DataLockRow): ResolvedTarget {
    const study = this.repository.findStudy(lock.studyId) ?? { id: lock.studyId, code: lock.studyId };
    return (
      this.lookUp(study, lock.scope, lock.scopeId) ?? {
        scopeId: lock.scopeId,
        words: `${lock.scope} ${lock.scopeId} (no longer in the study)`,
        siteId: null,
      }
    );
  }

  /** The data a scope and a key (id, number or code) name in the study, if it exists. */
  private lookUp(study: { id: string; code: string }, scope: LockScope, key: string): ResolvedTarget | undefined {
    switch (scope) {
      case 'study':
        return key === study.id || key.toLowerCase() === study.code.toLowerCase()
          ? { scopeId: study.id, words: `The whole study ${study.code}`, siteId: null }
          : undefined;
      case 'site': {
        const site = this.repository.findSite(study.id, key);
        return site && { scopeId: site.id, words: `Site ${site.number} (${site.name})`, siteId: site.id };
      }
      case 'subject': {
        const subject = this.repository.findSubject(study.id, key);
        return subject && { scopeId: subject.id, words: `Subject ${subject.code} (site ${subject.siteNumber})`, siteId: subject.siteId };
      }
      case 'visit': {
        const visit = this.repository.findVisit(study.id, key);
        return visit && { scopeId: visit.id, words: `Visit ${visit.code} (${visit.name}), all subjects`, siteId: null };
      }
      case 'session': {
        const session = this.repository.findSession(study.id, key);
        return session && { scopeId: session.id, words: sessionWords(session), siteId: session.siteId };
      }
    }
  }

  private requireStudy(studyId: string) {
    const study = this.repository.findStudy(studyId);
    if (!study) throw AppError.notFound('There is no such study.');
    return study;
  }
}

function signatureFields(signature: { id: string; meaning: string; signedAt: string; printedName: string }) {
  return { signatureId: signature.id, meaning: signature.meaning, signedAt: signature.signedAt, signedBy: signature.printedName };
}

function sessionWords(session: { subjectCode: string; visitCode: string; timepointCode: string; bronchodilator: string; siteNumber: string }): string {
  return (
    `The session of subject ${session.subjectCode}, visit ${session.visitCode}, timepoint ${session.timepointCode}, ` +
    `${session.bronchodilator}-bronchodilator (site ${session.siteNumber})`
  );
}
