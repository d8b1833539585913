import { afterEach, beforeEach, describe, expect, it } from '@jest/globals';
import { provideHttpClient, withInterceptors } from '@angular/common/http';
import { HttpTestingController, provideHttpClientTesting } from '@angular/common/http/testing';
import { TestBed } from '@angular/core/testing';
import {
  ActivatedRouteSnapshot,
  Router,
  RouterStateSnapshot,
  UrlTree,
  provideRouter,
  withComponentInputBinding,
} from '@angular/router';
import { RouterTestingHarness } from '@angular/router/testing';

import { loadSession, meWithRoles } from '../../../testing/session-testing';
import { APP_ROUTES } from '../../app.routes';
import { errorInterceptor } from '../http/error-interceptor';
import { roleGuard, signedInGuard } from './role-guard';

// Deny by default; signed-out visitors go to sign-in, signed-in visitors without the role get a
// 403 page (common practice; status meanings as in RFC 9110, 2022, §15.5.2 and §15.5.4).
describe('role guards', () => {
  beforeEach(() => {
    TestBed.configureTestingModule({
      providers: [
        // Same router features as app.config.ts: pages read query parameters as inputs.
        provideRouter(APP_ROUTES, withComponentInputBinding()),
        provideHttpClient(withInterceptors([errorInterceptor])),
        provideHttpClientTesting(),
      ],
    });
  });

  afterEach(() => TestBed.inject(HttpTestingController).verify());

  function runGuard(guard: typeof signedInGuard, url: string) {
    const state = { url } as RouterStateSnapshot;
    return TestBed.runInInjectionContext(() => guard({} as ActivatedRouteSnapshot, state));
  }

  function serialized(result: unknown): string {
    expect(result).toBeInstanceOf(UrlTree);
    return TestBed.inject(Router).serializeUrl(result as UrlTree);
  }

  describe('roleGuard', () => {
    it('allows a user holding the role in some study', async () => {
      await loadSession(meWithRoles(['site-coordinator', 'monitor']));
      await expect(runGuard(roleGuard('monitor'), '/oversight')).resolves.toBe(true);
    });

    it('allows a user holding any one of several roles', async () => {
      await loadSession(meWithRoles(['adjudicator']));
      await expect(runGuard(roleGuard('over-reader', 'adjudicator'), '/adjudication')).resolves.toBe(true);
    });

    it('sends a signed-in user without the role to /forbidden, naming the refused URL', async () => {
      await loadSession(meWithRoles(['site-coordinator']));
      const result = await runGuard(roleGuard('over-reader'), '/reading');
      expect(serialized(result)).toBe('/forbidden?from=%2Freading');
    });

    it('sends a visitor who is not signed in to /sign-in with the way back', async () => {
      await loadSession(null);
      const result = await runGuard(roleGuard('over-reader'), '/reading/queue?page=2');
      expect(serialized(result)).toBe('/sign-in?returnTo=%2Freading%2Fqueue%3Fpage%3D2');
    });

    it('sends the visitor to sign-in with an error code when /api/me is down', async () => {
      const pending = runGuard(roleGuard('monitor'), '/oversight');
      TestBed.inject(HttpTestingController)
        .expectOne('/api/me')
        .flush(null, { status: 503, statusText: 'Service Unavailable' });
      expect(serialized(await pending)).toBe('/sign-in?returnTo=%2Foversight&error=session-unavailable');
    });
  });

  describe('signedInGuard', () => {
    it('allows any signed-in user, even without roles', async () => {
      await loadSession(meWithRoles([]));
      await expect(runGuard(signedInGuard, '/forbidden')).resolves.toBe(true);
    });

    it('sends a visitor who is not signed in to /sign-in', async () => {
      await loadSession(null);
      expect(serialized(await runGuard(signedInGuard, '/setup'))).toBe('/sign-in?returnTo=%2Fsetup');
    });
  });

  describe('through the app routes', () => {
    it('opens the area of a role the user holds', async () => {
      await loadSession(meWithRoles(['monitor']));
      const harness = await RouterTestingHarness.create();
      await harness.navigateByUrl('/oversight');

      expect(TestBed.inject(Router).url).toBe('/oversight');
      const heading = harness.routeNativeElement?.querySelector('[data-testid="area-home"]');
      expect(heading?.textContent?.trim()).toBe('Audit & oversight');
    });

    it('refuses an area of a role the user lacks', async () => {
      await loadSession(meWithRoles(['monitor']));
      const harness = await RouterTestingHarness.create();
      await harness.navigateByUrl('/data-office');

      expect(TestBed.inject(Router).url).toBe('/forbidden?from=%2Fdata-office');
      expect(harness.routeNativeElement?.textContent).toContain('No access to Data office');
    });

    it('sends / to the first area the user holds', async () => {
      await loadSession(meWithRoles(['study-admin', 'data-manager']));
      const harness = await RouterTestingHarness.create();
      await harness.navigateByUrl('/');

      // Catalogue order in app-areas.ts puts the data office before study setup.
      expect(TestBed.inject(Router).url).toBe('/data-office');
    });

    it('sends a signed-out visitor to sign-in', async () => {
      await loadSession(null);
      const harness = await RouterTestingHarness.create();
      await harness.navigateByUrl('/setup');

      expect(TestBed.inject(Router).url).toBe('/sign-in?returnTo=%2Fsetup');
    });
  });
});
