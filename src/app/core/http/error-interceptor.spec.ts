import { afterEach, beforeEach, describe, expect, it } from '@jest/globals';
import { HttpClient, provideHttpClient, withInterceptors } from '@angular/common/http';
import { HttpTestingController, provideHttpClientTesting } from '@angular/common/http/testing';
import { TestBed } from '@angular/core/testing';
import { firstValueFrom } from 'rxjs';

import { ApiError } from './api-error';
import { errorInterceptor } from './error-interceptor';

describe('errorInterceptor', () => {
  let http: HttpClient;
  let backend: HttpTestingController;

  beforeEach(() => {
    TestBed.configureTestingModule({
      providers: [provideHttpClient(withInterceptors([errorInterceptor])), provideHttpClientTesting()],
    });
    http = TestBed.inject(HttpClient);
    backend = TestBed.inject(HttpTestingController);
  });

  afterEach(() => backend.verify());

  async function failureOf(promise: Promise<unknown>): Promise<ApiError> {
    const outcome = await promise.then(
      () => new Error('expected the request to fail'),
      (error: unknown) => error,
    );
    expect(outcome).toBeInstanceOf(ApiError);
    return outcome as ApiError;
  }

  // Body shape from the errorResponseSchema contract in shared/contracts/auth.ts.
  it("keeps the server's own message, code and request id", async () => {
    const pending = failureOf(firstValueFrom(http.post('/api/locks', {})));
    backend.expectOne('/api/locks').flush(
      { error: { code: 'locked', message: 'This visit is locked by the data office.', requestId: 'r-42' } },
      { status: 409, statusText: 'Conflict' },
    );

    const error = await pending;
    expect(error).toMatchObject({
      status: 409,
      code: 'locked',
      message: 'This visit is locked by the data office.',
      requestId: 'r-42',
    });
  });

  it('reads the error body of a text request', async () => {
    const pending = failureOf(firstValueFrom(http.post('/auth/logout', null, { responseType: 'text' })));
    backend
      .expectOne('/auth/logout')
      .flush(JSON.stringify({ error: { code: 'csrf', message: 'Reload the page and try again.' } }), {
        status: 403,
        statusText: 'Forbidden',
      });

    expect(await pending).toMatchObject({ status: 403, code: 'csrf', message: 'Reload the page and try again.' });
  });

  // Status 0 is how browsers report a request that got no HTTP response at all (common practice).
  it('explains an unreachable server in words', async () => {
    const pending = failureOf(firstValueFrom(http.get('/api/studies')));
    backend.expectOne('/api/studies').error(new ProgressEvent('error'), { status: 0 });

    const error = await pending;
    expect(error.code).toBe('network');
    expect(error.message).toMatch(/could not reach the server/);
  });

  it('falls back to a status-based message and the request id header for foreign bodies', async () => {
    const pending = failureOf(firstValueFrom(http.get('/api/studies')));
    backend.expectOne('/api/studies').flush('<html>Bad gateway</html>', {
      status: 502,
      statusText: 'Bad Gateway',
      headers: { 'x-request-id': 'edge-7' },
    });

    const error = await pending;
    expect(error).toMatchObject({ status: 502, code: 'server', requestId: 'edge-7' });
    expect(error.message).not.toContain('<html>');
  });
});
