/**
 * What a data lock covers, and what its signatures are bound to. Tables of cases; the rules are
 * ours (issue 7: a lock on a session, subject, site, visit or the whole study), the binding of a
 * signature to its record's content is 21 CFR 11.70.
 */
import { describe, expect, it } from '@jest/globals';
import type { LockScope } from '../../shared/contracts/locks.js';
import { contentHash } from '../signatures/content-hash.js';
import {
  coveringLock,
  lockCovers,
  lockedConflict,
  lockedContent,
  sameActiveLock,
  signaturesComplete,
  unlockedContent,
  type LockRecord,
  type LockTarget,
} from './lock-scope.js';

function lock(scope: LockScope, scopeId: string, overrides: Partial<LockRecord> = {}): LockRecord {
  return {
    id: `lock-${scope}-${scopeId}`,
    studyId: 'study-a',
    scope,
    scopeId,
    reason: 'database lock for the interim analysis',
    lockedBy: 'user-dm',
    lockedAt: '2026-03-01T10:00:00.000Z',
    unlockedBy: null,
    unlockedAt: null,
    unlockReason: null,
    ...overrides,
  };
}

/** A session at site-1, subject subj-1, visit visit-1. */
const SESSION: LockTarget = { studyId: 'study-a', siteId: 'site-1', subjectId: 'subj-1', visitId: 'visit-1', sessionId: 'sess-1' };
/** A subject being enrolled at site-1: no subject, visit or session id yet. */
const NEW_SUBJECT: LockTarget = { studyId: 'study-a', siteId: 'site-1' };
/** A session being registered for subj-1 at visit-1: no session id yet. */
const NEW_SESSION: LockTarget = { studyId: 'study-a', siteId: 'site-1', subjectId: 'subj-1', visitId: 'visit-1' };

describe('lockCovers', () => {
  it.each<[string, LockRecord, LockTarget, boolean]>([
    ['a study lock covers a session of the study', lock('study', 'study-a'), SESSION, true],
    ['a study lock covers a subject being enrolled', lock('study', 'study-a'), NEW_SUBJECT, true],
    ['a study lock does not cover another study', lock('study', 'study-b', { studyId: 'study-b' }), SESSION, false],
    ['a site lock covers a session at the site', lock('site', 'site-1'), SESSION, true],
    ['a site lock covers enrolment at the site', lock('site', 'site-1'), NEW_SUBJECT, true],
    ['a site lock does not cover another site', lock('site', 'site-2'), SESSION, false],
    ['a subject lock covers the subject’s session', lock('subject', 'subj-1'), SESSION, true],
    ['a subject lock covers a new session of the subject', lock('subject', 'subj-1'), NEW_SESSION, true],
    ['a subject lock does not cover enrolment of another subject', lock('subject', 'subj-1'), NEW_SUBJECT, false],
    ['a visit lock covers the visit’s session', lock('visit', 'visit-1'), SESSION, true],
    ['a visit lock covers a new session at the visit', lock('visit', 'visit-1'), NEW_SESSION, true],
    ['a visit lock does not cover another visit', lock('visit', 'visit-2'), SESSION, false],
    ['a session lock covers the session', lock('session', 'sess-1'), SESSION, true],
    ['a session lock does not cover a new session of the same subject', lock('session', 'sess-1'), NEW_SESSION, false],
    ['an unlocked lock covers nothing', lock('study', 'study-a', { unlockedAt: '2026-03-02T00:00:00.000Z' }), SESSION, false],
  ])('%s', (_label, given, target, expected) => {
    expect(lockCovers(given, target)).toBe(expected);
  });
});

describe('coveringLock', () => {
  it('names the oldest active lock covering the target, whatever the order given', () => {
    const newer = lock('session', 'sess-1', { lockedAt: '2026-03-05T00:00:00.000Z', reason: 'newer' });
    const older = lock('site', 'site-1', { lockedAt: '2026-03-01T00:00:00.000Z', reason: 'older' });
    const elsewhere = lock('site', 'site-2', { lockedAt: '2026-01-01T00:00:00.000Z', reason: 'other site' });
    expect(coveringLock([newer, elsewhere, older], SESSION)?.reason).toBe('older');
    expect(coveringLock([elsewhere], SESSION)).toBeUndefined();
  });
});

describe('sameActiveLock', () => {
  it.each<[string, LockRecord, boolean]>([
    ['the same scope and id, active', lock('site', 'site-1'), true],
    ['the same scope and id, unlocked', lock('site', 'site-1', { unlockedAt: '2026-03-02T00:00:00.000Z' }), false],
    ['another id', lock('site', 'site-2'), false],
    ['a broader lock over the same data', lock('study', 'study-a'), false],
  ])('%s', (_label, existing, found) => {
    expect(Boolean(sameActiveLock([existing], { studyId: 'study-a', scope: 'site', scopeId: 'site-1' }))).toBe(found);
  });
});

describe('signed content', () => {
  const a = lock('site', 'site-1', { id: 'lock-a' });
  const b = lock('site', 'site-1', { id: 'lock-b' });

  it('binds a "locked" signature to one lock: the same data locked twice still hashes differently', () => {
    expect(contentHash(lockedContent(a))).not.toBe(contentHash(lockedContent(b)));
  });

  it.each<[string, Partial<LockRecord>]>([
    ['the reason', { reason: 'edited later' }],
    ['the scope id', { scopeId: 'site-2' }],
    ['the signer', { lockedBy: 'someone-else' }],
    ['the time', { lockedAt: '2026-03-01T10:00:01.000Z' }],
  ])('changes when %s changes', (_label, change) => {
    expect(contentHash(lockedContent({ ...a, ...change }))).not.toBe(contentHash(lockedContent(a)));
  });

  it('keeps the "locked" content unchanged by the unlocking, and binds the "unlocked" one to it', () => {
    const unlocked = { ...a, unlockedBy: 'user-dm', unlockedAt: '2026-04-01T00:00:00.000Z', unlockReason: 'query reopened by sponsor' };
    expect(contentHash(lockedContent(unlocked))).toBe(contentHash(lockedContent(a)));
    expect(contentHash(unlockedContent(unlocked))).not.toBe(contentHash(unlockedContent({ ...unlocked, unlockReason: 'other' })));
  });
});

describe('signaturesComplete', () => {
  const active = lock('study', 'study-a');
  const past = lock('study', 'study-a', { unlockedAt: '2026-04-01T00:00:00.000Z' });
  it.each<[string, LockRecord, { meaning: string; valid: boolean }[], boolean]>([
    ['an active lock with a valid "locked" signature', active, [{ meaning: 'locked', valid: true }], true],
    ['an active lock without signature', active, [], false],
    ['an active lock whose signature no longer matches', active, [{ meaning: 'locked', valid: false }], false],
    ['a valid lock with a replayed signature attached', active, [{ meaning: 'locked', valid: true }, { meaning: 'locked', valid: false }], false],
    ['an unlocked lock with both signatures', past, [{ meaning: 'locked', valid: true }, { meaning: 'unlocked', valid: true }], true],
    ['an unlocked lock without the "unlocked" signature', past, [{ meaning: 'locked', valid: true }], false],
  ])('%s', (_label, given, signatures, expected) => {
    expect(signaturesComplete(given, signatures)).toBe(expected);
  });
});

describe('lockedConflict', () => {
  it('answers 409 locked with what is locked, the scope, since when and the reason', () => {
    const error = lockedConflict(lock('site', 'site-1'), 'site 101');
    expect(error.status).toBe(409);
    expect(error.code).toBe('locked');
    expect(error.message).toBe(
      'The data of site 101 is locked (site lock since 2026-03-01T10:00:00.000Z: database lock for the interim analysis); nothing was changed.',
    );
    expect(error.details).toEqual({
      lockId: 'lock-site-site-1',
      scope: 'site',
      reason: 'database lock for the interim analysis',
      lockedAt: '2026-03-01T10:00:00.000Z',
    });
  });
});
