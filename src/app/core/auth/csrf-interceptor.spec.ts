import { afterEach, beforeEach, describe, expect, it } from '@jest/globals';
import { HttpClient, provideHttpClient, withInterceptors } from '@angular/common/http';
import { HttpTestingController, provideHttpClientTesting } from '@angular/common/http/testing';
import { TestBed } from '@angular/core/testing';

import { CSRF_HEADER } from '@shared/contracts/auth';
import { loadSession, meWithRoles } from '../../../testing/session-testing';
import { csrfInterceptor } from './csrf-interceptor';

describe('csrfInterceptor', () => {
  let http: HttpClient;
  let backend: HttpTestingController;

  async function setUp(signedIn: boolean): Promise<void> {
    TestBed.configureTestingModule({
      providers: [provideHttpClient(withInterceptors([csrfInterceptor])), provideHttpClientTesting()],
    });
    await loadSession(signedIn ? meWithRoles(['data-manager'], 'token-from-me') : null);
    http = TestBed.inject(HttpClient);
    backend = TestBed.inject(HttpTestingController);
  }

  afterEach(() => backend.verify());

  describe('signed in', () => {
    beforeEach(() => setUp(true));

    // Safe methods change nothing, so they carry no token (RFC 9110, 2022, §9.2.1).
    it.each(['GET', 'HEAD', 'OPTIONS'])('sends no token on %s', (method) => {
      http.request(method, '/api/studies').subscribe();
      const request = backend.expectOne('/api/studies');
      expect(request.request.headers.has(CSRF_HEADER)).toBe(false);
      request.flush(null);
    });

    // Synchronizer token on every state-changing request (OWASP CSRF Prevention Cheat Sheet).
    it.each(['POST', 'PUT', 'PATCH', 'DELETE'])('sends the token from /api/me on %s', (method) => {
      http.request(method, '/api/sessions/s-1', { body: {} }).subscribe();
      const request = backend.expectOne('/api/sessions/s-1');
      expect(request.request.headers.get(CSRF_HEADER)).toBe('token-from-me');
      request.flush(null);
    });

    it('treats a lower-case method as a write too', () => {
      http.request('post', '/api/queries', { body: {} }).subscribe();
      const request = backend.expectOne('/api/queries');
      expect(request.request.headers.get(CSRF_HEADER)).toBe('token-from-me');
      request.flush(null);
    });

    // A token sent to another origin could be replayed from there (OWASP, same cheat sheet).
    it('never sends the token to another origin', () => {
      http.post('https://other-origin.example.org/collect', {}).subscribe();
      const request = backend.expectOne('https://other-origin.example.org/collect');
      expect(request.request.headers.has(CSRF_HEADER)).toBe(false);
      request.flush(null);
    });
  });

  describe('signed out', () => {
    beforeEach(() => setUp(false));

    it('sends no header when there is no token', () => {
      http.post('/auth/logout', null).subscribe();
      const request = backend.expectOne('/auth/logout');
      expect(request.request.headers.has(CSRF_HEADER)).toBe(false);
      request.flush(null);
    });
  });
});
