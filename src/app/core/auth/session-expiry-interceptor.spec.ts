import { afterEach, beforeEach, describe, expect, it, jest } from '@jest/globals';
import { HttpClient, provideHttpClient, withInterceptors } from '@angular/common/http';
import { HttpTestingController, provideHttpClientTesting } from '@angular/common/http/testing';
import { TestBed } from '@angular/core/testing';
import { Router } from '@angular/router';

import { sessionExpiryInterceptor } from './session-expiry-interceptor';

describe('sessionExpiryInterceptor', () => {
  let http: HttpClient;
  let backend: HttpTestingController;
  let navigate: jest.Mock<(commands: unknown[], extras?: unknown) => Promise<boolean>>;

  beforeEach(() => {
    navigate = jest.fn(async () => true);
    TestBed.configureTestingModule({
      providers: [
        provideHttpClient(withInterceptors([sessionExpiryInterceptor])),
        provideHttpClientTesting(),
        { provide: Router, useValue: { url: '/site-desk/sessions', navigate } },
      ],
    });
    http = TestBed.inject(HttpClient);
    backend = TestBed.inject(HttpTestingController);
  });

  afterEach(() => backend.verify());

  it('sends the user to sign in, and back to where they were, when a session ends mid-work', () => {
    http.get('/api/studies').subscribe({ error: () => undefined });
    backend.expectOne('/api/studies').flush({}, { status: 401, statusText: 'Unauthorized' });
    expect(navigate).toHaveBeenCalledWith(['/sign-in'], {
      queryParams: { returnTo: '/site-desk/sessions', error: 'session-expired' },
    });
  });

  it('leaves /api/me alone, where 401 only means "not signed in"', () => {
    http.get('/api/me').subscribe({ error: () => undefined });
    backend.expectOne('/api/me').flush({}, { status: 401, statusText: 'Unauthorized' });
    expect(navigate).not.toHaveBeenCalled();
  });

  it('leaves a signing route alone when it asks the signer to confirm their identity', () => {
    http.post('/api/studies/s/reads/r/sign', {}).subscribe({ error: () => undefined });
    backend
      .expectOne('/api/studies/s/reads/r/sign')
      .flush({ error: { code: 'reauthentication-required', message: 'Confirm your identity' } }, { status: 401, statusText: 'Unauthorized' });
    expect(navigate).not.toHaveBeenCalled();
  });

  it('does not react to other errors', () => {
    http.get('/api/studies').subscribe({ error: () => undefined });
    backend.expectOne('/api/studies').flush({}, { status: 403, statusText: 'Forbidden' });
    expect(navigate).not.toHaveBeenCalled();
  });
});
