import { afterEach, describe, expect, it } from '@jest/globals';
import { provideHttpClient, withInterceptors } from '@angular/common/http';
import { HttpTestingController, provideHttpClientTesting } from '@angular/common/http/testing';
import { Component } from '@angular/core';
import { TestBed } from '@angular/core/testing';
import { MatNavListHarness } from '@angular/material/list/testing';
import { Router, provideRouter } from '@angular/router';
import { TestbedHarnessEnvironment } from '@angular/cdk/testing/testbed';

import { CSRF_HEADER, type Role } from '@shared/contracts/auth';
import { loadSession, meWithRoles } from '../../../testing/session-testing';
import { csrfInterceptor } from '../auth/csrf-interceptor';
import { errorInterceptor } from '../http/error-interceptor';
import { AppShell } from './app-shell';

@Component({ template: '<p>signed out</p>' })
class SignedOutPage {}

async function renderShellFor(roles: Role[]) {
  TestBed.configureTestingModule({
    providers: [
      provideRouter([{ path: 'sign-in', component: SignedOutPage }]),
      provideHttpClient(withInterceptors([csrfInterceptor, errorInterceptor])),
      provideHttpClientTesting(),
    ],
  });
  await loadSession(meWithRoles(roles, 'shell-token'));
  const fixture = TestBed.createComponent(AppShell);
  await fixture.whenStable();
  const loader = TestbedHarnessEnvironment.loader(fixture);
  return { fixture, loader };
}

async function navigationTitles(roles: Role[]): Promise<string[]> {
  const { loader } = await renderShellFor(roles);
  const navList = await loader.getHarness(MatNavListHarness);
  return Promise.all((await navList.getItems()).map((item) => item.getTitle()));
}

// Area-to-role mapping as the product defines it: each role sees only its own area.
describe('AppShell', () => {
  afterEach(() => TestBed.inject(HttpTestingController).verify());

  it('shows only the areas of the roles the user holds', async () => {
    await expect(navigationTitles(['site-coordinator', 'monitor'])).resolves.toEqual([
      'Site desk',
      'Audit & oversight',
    ]);
  });

  it('shows an over-reader the reading room and nothing else', async () => {
    await expect(navigationTitles(['over-reader'])).resolves.toEqual(['Reading room']);
  });

  it('shows all six areas to a user holding all six roles', async () => {
    const titles = await navigationTitles([
      'study-admin',
      'monitor',
      'data-manager',
      'adjudicator',
      'over-reader',
      'site-coordinator',
    ]);
    expect(titles).toEqual([
      'Site desk',
      'Reading room',
      'Adjudication',
      'Data office',
      'Audit & oversight',
      'Study setup',
    ]);
  });

  it('shows no area links, and says why, to a user without roles', async () => {
    const { fixture } = await renderShellFor([]);
    const element: HTMLElement = fixture.nativeElement;
    expect(element.querySelectorAll('nav a').length).toBe(0);
    expect(element.querySelector('nav')?.textContent).toContain('no role in any study');
  });

  it("names the user and their roles in the app bar", async () => {
    const { fixture } = await renderShellFor(['data-manager', 'monitor']);
    const element: HTMLElement = fixture.nativeElement;
    expect(element.querySelector('[data-testid="user-name"]')?.textContent?.trim()).toBe('Wren Halloway');
    const chips = Array.from(element.querySelectorAll('mat-chip')).map((chip) => chip.textContent?.trim());
    expect(chips).toEqual(['Data manager', 'Monitor']);
  });

  it("links to the user's messages from the app bar, with a name for screen readers", async () => {
    const { fixture } = await renderShellFor(['over-reader']);
    const link = (fixture.nativeElement as HTMLElement).querySelector('a[data-testid="messages-link"]');
    expect(link?.getAttribute('href')).toBe('/messages');
    expect(link?.getAttribute('aria-label')).toBe('Messages');
  });

  it('offers a skip link to the main content', async () => {
    const { fixture } = await renderShellFor(['monitor']);
    const element: HTMLElement = fixture.nativeElement;
    const skip = element.querySelector<HTMLAnchorElement>('a.skip-link');
    const main = element.querySelector<HTMLElement>('main#main-content');
    expect(skip?.getAttribute('href')).toBe('#main-content');
    skip?.click();
    expect(document.activeElement).toBe(main);
  });

  it('signs out with a CSRF-protected POST and goes to the sign-in page', async () => {
    const { fixture } = await renderShellFor(['monitor']);
    const button = Array.from((fixture.nativeElement as HTMLElement).querySelectorAll('button')).find((b) =>
      b.textContent?.includes('Sign out'),
    );
    button?.click();
    const request = TestBed.inject(HttpTestingController).expectOne('/auth/logout');
    expect(request.request.method).toBe('POST');
    expect(request.request.headers.get(CSRF_HEADER)).toBe('shell-token');
    request.flush('');
    await fixture.whenStable();

    expect(TestBed.inject(Router).url).toBe('/sign-in');
  });
});
