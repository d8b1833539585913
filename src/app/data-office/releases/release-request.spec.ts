import { describe, expect, it } from '@jest/globals';

import {
  pendingFrom,
  releaseRequestOf,
  returnPathFor,
  scopeText,
  sizeText,
  type PendingRelease,
  type ReleaseForm,
  type ReleasesPageQuery,
} from './release-request';

const form = (overrides: Partial<ReleaseForm>): ReleaseForm => ({ siteIds: [], visitCodes: [], reason: '', ...overrides });

describe('releaseRequestOf', () => {
  it.each<[string, Partial<ReleaseForm>, unknown]>([
    ['the whole study without reason', {}, { request: {} }],
    ['the whole study, reason trimmed', { reason: '  Interim cut ' }, { request: { reason: 'Interim cut' } }],
    ['two sites', { siteIds: ['site-101', 'site-102'] }, { request: { scope: { siteIds: ['site-101', 'site-102'] } } }],
    ['one visit of one site', { siteIds: ['site-101'], visitCodes: ['V2'] }, { request: { scope: { siteIds: ['site-101'], visitCodes: ['V2'] } } }],
    ['a reason longer than the server takes', { reason: 'x'.repeat(501) }, { problem: 'Shorten the reason to 500 characters (it has 501).' }],
  ])('%s', (_label, overrides, expected) => {
    expect(releaseRequestOf(form(overrides))).toEqual(expected);
  });
});

describe('the re-authentication round trip', () => {
  /** The query as the router's input binding gives it: one value a string, a repeated one an array. */
  function queryOf(path: string): ReleasesPageQuery {
    const params = new URLSearchParams(path.slice(path.indexOf('?') + 1));
    const query: Record<string, string | string[]> = {};
    params.forEach((value, key) => {
      const earlier = query[key];
      query[key] = earlier === undefined ? value : [...(typeof earlier === 'string' ? [earlier] : earlier), value];
    });
    return query;
  }

  it.each<[string, PendingRelease]>([
    ['the whole study', { studyId: 'study-1', siteIds: [], visitCodes: [], reason: '' }],
    ['one site and two visits, with a reason of signs', { studyId: 'study-1', siteIds: ['site-101'], visitCodes: ['V1', 'V2'], reason: 'Cut & check: 100% #1' }],
    ['two sites', { studyId: 'study-1', siteIds: ['site-101', 'site-201'], visitCodes: [], reason: 'Interim' }],
  ])('keeps %s through the return path', (_label, pending) => {
    const path = returnPathFor(pending);
    expect(path.startsWith('/data-office/releases?')).toBe(true);
    expect(pendingFrom(queryOf(path))).toEqual(pending);
  });

  it.each<[string, ReleasesPageQuery]>([
    ['no pending action', { study: 'study-1', reason: 'x' }],
    ['a pending lock', { study: 'study-1', pending: 'lock' }],
    ['no study', { pending: 'release' }],
  ])('finds nothing to continue with %s', (_label, query) => {
    expect(pendingFrom(query)).toBeNull();
  });
});

describe('scopeText', () => {
  const numbers = new Map([
    ['site-101', '101'],
    ['site-102', '102'],
  ]);
  it.each<[string, Parameters<typeof scopeText>[0], string]>([
    ['nothing chosen', { siteIds: null, visitCodes: null }, 'Whole study'],
    ['empty lists', { siteIds: [], visitCodes: [] }, 'Whole study'],
    ['sites by number', { siteIds: ['site-101', 'site-102'], visitCodes: null }, 'Sites 101, 102'],
    ['a site not (yet) listed, by id', { siteIds: ['site-999'], visitCodes: null }, 'Site site-999'],
    ['visits only', { siteIds: null, visitCodes: ['SCR'] }, 'Visit SCR'],
    ['both', { siteIds: ['site-101'], visitCodes: ['V1', 'V2'] }, 'Site 101 · visits V1, V2'],
  ])('%s', (_label, scope, expected) => {
    expect(scopeText(scope, numbers)).toBe(expected);
  });
});

describe('sizeText', () => {
  // Binary prefixes: IEC 80000-13 (KiB = 1024 bytes).
  it.each<[number, string]>([
    [0, '0 bytes'],
    [1, '1 byte'],
    [1023, '1,023 bytes'],
    [1024, '1,024 bytes (1.0 KiB)'],
    [12_345, '12,345 bytes (12.1 KiB)'],
    [5_242_880, '5,242,880 bytes (5.0 MiB)'],
  ])('%d bytes', (bytes, expected) => {
    expect(sizeText(bytes)).toBe(expected);
  });
});
