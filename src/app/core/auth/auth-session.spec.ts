import { afterEach, beforeEach, describe, expect, it } from '@jest/globals';
import { provideHttpClient, withInterceptors } from '@angular/common/http';
import { HttpTestingController, provideHttpClientTesting } from '@angular/common/http/testing';
import { TestBed } from '@angular/core/testing';

import type { MeResponse } from '@shared/contracts/auth';
import { answerMe, loadSession, meWithRoles } from '../../../testing/session-testing';
import { ApiError } from '../http/api-error';
import { errorInterceptor } from '../http/error-interceptor';
import { AuthSession } from './auth-session';

describe('AuthSession', () => {
  let backend: HttpTestingController;

  beforeEach(() => {
    TestBed.configureTestingModule({
      providers: [provideHttpClient(withInterceptors([errorInterceptor])), provideHttpClientTesting()],
    });
    backend = TestBed.inject(HttpTestingController);
  });

  afterEach(() => backend.verify());

  // Expected values follow the GET /api/me contract in shared/contracts/auth.ts.
  it('collects the roles held across studies, once each', async () => {
    const me: MeResponse = {
      ...meWithRoles(['over-reader', 'monitor']),
      assignments: [
        { studyId: 'a', studyCode: 'TM-A', role: 'over-reader', siteIds: null },
        { studyId: 'b', studyCode: 'TM-B', role: 'over-reader', siteIds: null },
        { studyId: 'b', studyCode: 'TM-B', role: 'monitor', siteIds: null },
      ],
    };
    const session = await loadSession(me);

    expect(session.isSignedIn()).toBe(true);
    expect([...session.roles()].sort()).toEqual(['monitor', 'over-reader']);
    expect(session.hasRole('over-reader')).toBe(true);
    expect(session.hasRole('study-admin')).toBe(false);
    expect(session.assignmentsFor('over-reader').map((a) => a.studyCode)).toEqual(['TM-A', 'TM-B']);
    expect(session.csrfToken()).toBe('csrf-test-token');
    expect(session.user()?.name).toBe('Wren Halloway');
  });

  // 401 Unauthorized means "no valid credentials" (RFC 9110, 2022, §15.5.2): signed out, not an error.
  it('treats 401 as signed out', async () => {
    const session = await loadSession(null);

    expect(session.status()).toBe('signed-out');
    expect(session.roles().size).toBe(0);
    expect(session.csrfToken()).toBeNull();
  });

  it('rejects with the server message when /api/me fails otherwise', async () => {
    const session = TestBed.inject(AuthSession);
    const loaded = session.ensureLoaded();
    backend
      .expectOne('/api/me')
      .flush(
        { error: { code: 'internal', message: 'The server is restarting.', requestId: 'req-9' } },
        { status: 503, statusText: 'Service Unavailable' },
      );

    await expect(loaded).rejects.toEqual(expect.objectContaining({ status: 503, requestId: 'req-9' }));
    await expect(loaded).rejects.toBeInstanceOf(ApiError);
    expect(session.status()).toBe('unknown');
  });

  it('asks the server once for concurrent callers', async () => {
    const session = TestBed.inject(AuthSession);
    const first = session.ensureLoaded();
    const second = session.ensureLoaded();
    answerMe(meWithRoles(['monitor']));

    await expect(Promise.all([first, second])).resolves.toEqual([true, true]);
    await expect(session.ensureLoaded()).resolves.toBe(true);
  });

  it('refuses a body that breaks the contract', async () => {
    const session = TestBed.inject(AuthSession);
    const loaded = session.ensureLoaded();
    backend.expectOne('/api/me').flush({ user: { id: 'x' }, assignments: [] });

    await expect(loaded).rejects.toThrow();
    expect(session.isSignedIn()).toBe(false);
  });

  it('signs out with POST /auth/logout and forgets the user', async () => {
    const session = await loadSession(meWithRoles(['monitor']));
    const signedOut = session.signOut();
    const request = backend.expectOne('/auth/logout');
    expect(request.request.method).toBe('POST');
    request.flush('');
    await signedOut;

    expect(session.status()).toBe('signed-out');
    expect(session.user()).toBeNull();
  });
});
