import { describe, expect, it } from '@jest/globals';

import { loginUrl, safeReturnPath } from './return-path';

// Redirect targets after sign-in must stay on this site: OWASP Unvalidated Redirects and Forwards
// Cheat Sheet; `//host` and `/\host` are network-path references (RFC 3986, 2005, §4.2, and the
// WHATWG URL Standard's backslash handling).
describe('safeReturnPath', () => {
  it.each([
    ['/reading', '/reading'],
    ['/data-office/locks?visit=V3#top', '/data-office/locks?visit=V3#top'],
    ['/', '/'],
  ])('keeps the in-app path %s', (candidate, expected) => {
    expect(safeReturnPath(candidate)).toBe(expected);
  });

  it.each([
    ['//evil.example.com/phish'],
    ['/\\evil.example.com'],
    ['https://evil.example.com/'],
    ['javascript:alert(1)'],
    ['reading'],
    ['/\t/evil.example.com'],
    [''],
  ])('replaces %p with /', (candidate) => {
    expect(safeReturnPath(candidate)).toBe('/');
  });

  it('does not send the user back to the sign-in page itself', () => {
    expect(safeReturnPath('/sign-in?returnTo=%2Freading')).toBe('/');
  });

  it('treats a missing value as /', () => {
    expect(safeReturnPath(undefined)).toBe('/');
    expect(safeReturnPath(null)).toBe('/');
  });
});

describe('loginUrl', () => {
  it('encodes the way back as one query value for the server route', () => {
    expect(loginUrl('/reading/queue?page=2&sort=age')).toBe(
      '/auth/login?returnTo=%2Freading%2Fqueue%3Fpage%3D2%26sort%3Dage',
    );
  });

  it('falls back to / for an unsafe target', () => {
    expect(loginUrl('//evil.example.com')).toBe('/auth/login?returnTo=%2F');
  });
});
