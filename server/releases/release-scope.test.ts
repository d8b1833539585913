/**
 * Which sessions a release covers and what blocks it: the rule is ours (issue 7), "from locked
 * data only": every session in scope locked (a lock on the study, its site, subject, visit or the
 * session itself, as SessionRepository.activeLockOn reads it) and with a final read.
 */
import { describe, expect, it } from '@jest/globals';
import {
  blockersMessage,
  compareSessions,
  coveringLock,
  dataFingerprint,
  finalReadOf,
  releaseBlockers,
  sessionsInScope,
  type FingerprintRow,
  type LockHead,
  type SessionHead,
  type SignedReadHead,
} from './release-scope.js';

function session(id: string, overrides: Partial<SessionHead> = {}): SessionHead {
  return {
    id,
    siteId: 'site-1',
    siteNumber: '101',
    subjectId: `subject-${id}`,
    subjectCode: `101-${id}`,
    visitId: 'visit-1',
    visitCode: 'V1',
    visitOrdinal: 1,
    timepointCode: 'T0',
    timepointOrdinal: 1,
    bronchodilator: 'pre',
    status: 'final',
    updatedAt: '2026-01-02T00:00:00.000Z',
    ...overrides,
  };
}
const lock = (scope: LockHead['scope'], scopeId: string, overrides: Partial<LockHead> = {}): LockHead => ({
  id: `${scope}-${scopeId}`,
  scope,
  scopeId,
  lockedAt: '2026-02-01T00:00:00.000Z',
  unlockedAt: null,
  ...overrides,
});
const read = (id: string, sessionId: string, kind: string, signedAt: string): SignedReadHead => ({
  id,
  sessionId,
  uploadId: `upload-${sessionId}`,
  kind,
  version: 2,
  signedAt,
  resultJson: '{}',
  signerName: 'Reader',
});

describe('a lock covering a session', () => {
  const target = session('s1');
  it.each([
    ['the study', [lock('study', 'study-1')], 'study'],
    ['its site', [lock('site', 'site-1')], 'site'],
    ['its subject', [lock('subject', 'subject-s1')], 'subject'],
    ['its visit', [lock('visit', 'visit-1')], 'visit'],
    ['itself', [lock('session', 's1')], 'session'],
    ['another site only', [lock('site', 'site-2')], undefined],
    ['a lifted lock only', [lock('study', 'study-1', { unlockedAt: '2026-03-01T00:00:00.000Z' })], undefined],
    ['the earliest of two', [lock('site', 'site-1', { lockedAt: '2026-03-01' }), lock('subject', 'subject-s1', { lockedAt: '2026-02-15' })], 'subject'],
  ] as const)('%s', (_case, locks, scope) => {
    expect(coveringLock(locks, target)?.scope).toBe(scope);
  });
});

describe('the final read', () => {
  const reads = [read('r2', 's1', 'second', '2026-01-04'), read('r1', 's1', 'first', '2026-01-03')];
  it('is the earliest signed read, or the adjudication read when there is one, and none before the session is final', () => {
    expect(finalReadOf(session('s1'), reads)?.id).toBe('r1');
    expect(finalReadOf(session('s1'), [...reads, read('r3', 's1', 'adjudication', '2026-01-05')])?.id).toBe('r3');
    expect(finalReadOf(session('s1', { status: 'adjudication' }), reads)).toBeUndefined();
  });
});

describe('what blocks a release', () => {
  const sessions = [session('s1', { siteId: 'site-2' }), session('s2'), session('s3'), session('s4'), session('s5'), session('s6'), session('s7')];
  const finals = new Map(['s2', 's3'].map((id) => [id, read(`r-${id}`, id, 'first', '2026-01-03')]));
  const blockers = releaseBlockers(sessions, [lock('site', 'site-1')], finals);

  it('names every unlocked session and every locked one without a final read', () => {
    expect(blockers.map((blocker) => `${blocker.session.id}:${blocker.problem}`)).toEqual([
      's1:not-locked',
      's4:no-final-read',
      's5:no-final-read',
      's6:no-final-read',
      's7:no-final-read',
    ]);
  });

  it('says so in words, with a few of them', () => {
    expect(blockersMessage(blockers, 2)).toBe(
      'Only locked data with final reads can be released: 1 session is not locked (subject 101-s1, visit V1, time point T0, pre-bronchodilator), ' +
        'and 4 locked sessions have no final read (subject 101-s4, visit V1, time point T0, pre-bronchodilator; ' +
        'subject 101-s5, visit V1, time point T0, pre-bronchodilator; and 2 more). Nothing was released.',
    );
  });
});

describe('scope, order and fingerprint', () => {
  it('keeps the scope and sorts by site, subject, visit, time point, pre before post', () => {
    const sessions = [
      session('a', { subjectCode: '101-002' }),
      session('b', { subjectCode: '101-001', bronchodilator: 'post' }),
      session('c', { subjectCode: '101-001' }),
      session('d', { siteId: 'site-9', siteNumber: '100' }),
      session('e', { subjectCode: '101-001', visitCode: 'V0', visitOrdinal: 0 }),
    ];
    expect(sessionsInScope(sessions, { siteIds: ['site-1'], visitCodes: null }).map((s) => s.id)).toEqual(['e', 'c', 'b', 'a']);
    expect([...sessions].sort(compareSessions)[0].id).toBe('d');
    expect(sessionsInScope(sessions, { siteIds: null, visitCodes: ['V0'] }).map((s) => s.id)).toEqual(['e']);
  });

  it('changes its fingerprint when a session in scope or its final read changes, and only then', () => {
    const everything = { siteIds: null, visitCodes: null };
    const row = (sessionId: string, overrides: Partial<FingerprintRow> = {}, signed: SignedReadHead | null = read('r1', sessionId, 'first', '2026-01-03')): FingerprintRow => ({
      sessionId,
      updatedAt: '2026-01-02T00:00:00.000Z',
      status: 'final',
      siteId: 'site-1',
      visitCode: 'V1',
      read: signed,
      ...overrides,
    });
    const fingerprint = dataFingerprint([row('s1'), row('s2', {}, null)], everything);
    expect(dataFingerprint([row('s1'), row('s2', {}, null)], everything)).toBe(fingerprint);
    expect(dataFingerprint([row('s1', { updatedAt: '2026-05-05' }), row('s2', {}, null)], everything)).not.toBe(fingerprint);
    expect(dataFingerprint([row('s1', {}, { ...read('r1', 's1', 'first', '2026-01-03'), version: 3 }), row('s2', {}, null)], everything)).not.toBe(fingerprint);
    // A later second read is not the final read; a signed adjudication is.
    expect(dataFingerprint([row('s1'), row('s1', {}, read('r2', 's1', 'second', '2026-01-04')), row('s2', {}, null)], everything)).toBe(fingerprint);
    expect(dataFingerprint([row('s1'), row('s1', {}, read('r3', 's1', 'adjudication', '2026-01-05')), row('s2', {}, null)], everything)).not.toBe(fingerprint);
    // A session outside the scope changes nothing; one inside does.
    const siteOne = { siteIds: ['site-1'], visitCodes: null };
    expect(dataFingerprint([row('s1'), row('s3', { siteId: 'site-2' })], siteOne)).toBe(dataFingerprint([row('s1')], siteOne));
    expect(dataFingerprint([row('s1'), row('s3')], siteOne)).not.toBe(dataFingerprint([row('s1')], siteOne));
    expect(() => dataFingerprint([row('s2'), row('s1')], everything)).toThrow('ordered by session id');
  });
});
