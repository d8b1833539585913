import { describe, expect, it } from '@jest/globals';

import {
  lockRequestOf,
  pendingFrom,
  reauthenticationProblem,
  returnPathFor,
  signatureLine,
  type LockForm,
  type PendingSignature,
} from './lock-request';

const form = (overrides: Partial<LockForm>): LockForm => ({ scope: 'site', target: '101', subjectCode: '', reason: 'Site closed out', ...overrides });

describe('lockRequestOf', () => {
  it.each<[string, Partial<LockForm>, unknown]>([
    ['a site by number', {}, { request: { scope: 'site', scopeId: '101', reason: 'Site closed out' } }],
    ['the study, ignoring a leftover target', { scope: 'study', target: '101' }, { request: { scope: 'study', reason: 'Site closed out' } }],
    ['trimmed values', { scope: 'visit', target: ' V3 ', reason: '  Week 4 cleaned ' }, { request: { scope: 'visit', scopeId: 'V3', reason: 'Week 4 cleaned' } }],
    ['a session without a choice', { scope: 'session', target: '' }, { problem: 'Find the subject, then choose the session to lock.' }],
    ['a subject without a code', { scope: 'subject', target: ' ' }, { problem: 'Give the code of the subject to lock.' }],
    ['a reason too short', { reason: 'ok' }, { problem: 'Give the reason for locking (at least 3 characters).' }],
  ])('%s', (_label, overrides, expected) => {
    expect(lockRequestOf(form(overrides))).toEqual(expected);
  });
});

describe('the re-authentication round trip', () => {
  it.each<[string, PendingSignature]>([
    ['a lock', { kind: 'lock', studyId: 'study-1', scope: 'session', target: 'session-9', subjectCode: 'TM-0002', reason: 'Frozen & checked: 100%' }],
    ['a study lock without target', { kind: 'lock', studyId: 'study-1', scope: 'study', target: '', subjectCode: '', reason: 'Database lock' }],
    ['an unlock', { kind: 'unlock', studyId: 'study-1', lockId: 'lock-7', reason: 'Sponsor asked to reopen' }],
  ])('keeps %s through the return path', (_label, pending) => {
    const path = returnPathFor(pending);
    expect(path.startsWith('/data-office/locks?')).toBe(true);
    const params = new URLSearchParams(path.slice(path.indexOf('?') + 1));
    const query: Record<string, string> = {};
    params.forEach((value, key) => (query[key] = value));
    expect(pendingFrom(query)).toEqual(pending);
  });

  it.each([
    ['no pending action', { study: 'study-1', reason: 'x' }],
    ['an unknown scope', { study: 'study-1', pending: 'lock', scope: 'planet', reason: 'Frozen' }],
    ['an unlock without lock', { study: 'study-1', pending: 'unlock', reason: 'Reopen' }],
    ['no reason', { study: 'study-1', pending: 'lock', scope: 'study' }],
  ])('finds nothing to continue with %s', (_label, query) => {
    expect(pendingFrom(query)).toBeNull();
  });

  it.each<[string | undefined, RegExp | null]>([
    [undefined, null],
    ['confirmed', null],
    ['reauthentication-mismatch', /another person.*Nothing was signed/],
    ['something-new', /could not be confirmed.*Nothing was signed/],
  ])('explains the outcome %s', (outcome, expected) => {
    const problem = reauthenticationProblem(outcome);
    if (expected === null) expect(problem).toBeNull();
    else expect(problem).toMatch(expected);
  });
});

describe('signatureLine', () => {
  it('shows printed name, meaning and UTC time (21 CFR 11.50)', () => {
    expect(signatureLine({ printedName: 'Wren Halloway', meaning: 'unlocked', signedAt: '2025-03-01T10:15:30.123Z', valid: true })).toBe(
      'Wren Halloway · Unlocked · 2025-03-01 10:15:30 UTC',
    );
  });
});
