import { afterEach, beforeEach, describe, expect, it, jest } from '@jest/globals';
import { provideHttpClient, withInterceptors } from '@angular/common/http';
import { HttpTestingController, provideHttpClientTesting, type TestRequest } from '@angular/common/http/testing';
import { TestbedHarnessEnvironment } from '@angular/cdk/testing/testbed';
import { TestBed, type ComponentFixture } from '@angular/core/testing';
import { MATERIAL_ANIMATIONS } from '@angular/material/core';
import { MatSelectHarness } from '@angular/material/select/testing';
import { Router, provideRouter } from '@angular/router';

import type { LockList, LockView } from '@shared/contracts/locks';
import type { Schedule } from '@shared/contracts/sessions';
import type { Site } from '@shared/contracts/studies';
import { loadSession, meWithRoles } from '../../../testing/session-testing';
import { errorInterceptor } from '../../core/http/error-interceptor';
import { LocksPage } from './locks-page';
import { PageLeave } from './page-leave';

const STUDY = '/api/studies/study-1';

// Fictional sites, schedule and locks.
const SITES: Site[] = [{ id: 'site-101', studyId: 'study-1', number: '101', name: 'Harbour Lung Clinic', countryCode: 'NO', timeZone: 'Europe/Oslo' }];
const SCHEDULE: Schedule = {
  visits: [{ code: 'V1', name: 'Screening', dayOffset: -7, windowBeforeDays: 3, windowAfterDays: 3 }],
  timepoints: [{ code: 'T0', name: 'Pre-dose' }],
};
const SITE_LOCK: LockView = {
  id: 'lock-1',
  scope: 'site',
  scopeId: 'site-101',
  target: 'Site 101 (Harbour Lung Clinic)',
  reason: 'Site closed out',
  lockedBy: 'Wren Halloway',
  lockedAt: '2025-03-01T10:00:00.000Z',
  active: true,
  unlockedBy: null,
  unlockedAt: null,
  unlockReason: null,
  signatures: [{ printedName: 'Wren Halloway', meaning: 'locked', signedAt: '2025-03-01T10:00:00.000Z', valid: true }],
  signaturesValid: true,
};
const TAMPERED_PAST_LOCK: LockView = {
  ...SITE_LOCK,
  id: 'lock-0',
  scope: 'subject',
  scopeId: 'subject-1',
  target: 'Subject TM-0001 (site 101)',
  reason: 'Subject completed',
  active: false,
  unlockedBy: 'Wren Halloway',
  unlockedAt: '2025-02-02T09:00:00.000Z',
  unlockReason: 'Late correction',
  signatures: [
    { printedName: 'Wren Halloway', meaning: 'locked', signedAt: '2025-02-01T09:00:00.000Z', valid: false },
    { printedName: 'Wren Halloway', meaning: 'unlocked', signedAt: '2025-02-02T09:00:00.000Z', valid: true },
  ],
  signaturesValid: false,
};
const LIST: LockList = { active: [SITE_LOCK], past: [TAMPERED_PAST_LOCK] };

describe('LocksPage', () => {
  let fixture: ComponentFixture<LocksPage>;
  let backend: HttpTestingController;
  let leaveTo: jest.Mock<(url: string) => void>;

  beforeEach(async () => {
    leaveTo = jest.fn<(url: string) => void>();
    TestBed.configureTestingModule({
      providers: [
        provideHttpClient(withInterceptors([errorInterceptor])),
        provideHttpClientTesting(),
        provideRouter([{ path: '**', children: [] }]),
        { provide: MATERIAL_ANIMATIONS, useValue: { animationsDisabled: true } },
        { provide: PageLeave, useValue: { goTo: leaveTo } },
      ],
    });
    backend = TestBed.inject(HttpTestingController);
    await loadSession(meWithRoles(['data-manager']));
  });

  afterEach(() => backend.verify());

  /** Creates the page with these query parameters and answers its first reads. */
  async function open(query: Record<string, string> = {}): Promise<void> {
    fixture = TestBed.createComponent(LocksPage);
    for (const [name, value] of Object.entries(query)) fixture.componentRef.setInput(name, value);
    fixture.detectChanges();
    TestBed.tick();
    answerReads();
    await fixture.whenStable();
  }

  function answerReads(list: LockList = LIST): void {
    const reads = (url: string) => backend.match((request) => request.method === 'GET' && request.url === url);
    reads(`${STUDY}/locks`).forEach((request) => request.flush(list));
    reads(`${STUDY}/sites`).forEach((request) => request.flush(SITES));
    reads(`${STUDY}/schedule`).forEach((request) => request.flush(SCHEDULE));
  }

  /** After a write: the page reloads the locks. */
  async function answerReload(): Promise<void> {
    TestBed.tick();
    answerReads();
    await fixture.whenStable();
  }

  function text(): string {
    return (fixture.nativeElement as HTMLElement).textContent?.replace(/\s+/g, ' ') ?? '';
  }

  async function fill(testId: string, value: string): Promise<void> {
    const field = (fixture.nativeElement as HTMLElement).querySelector<HTMLInputElement | HTMLTextAreaElement>(`[data-testid="${testId}"]`)!;
    field.value = value;
    field.dispatchEvent(new Event('input'));
    await fixture.whenStable();
  }

  async function click(testId: string): Promise<void> {
    (fixture.nativeElement as HTMLElement).querySelector<HTMLButtonElement>(`[data-testid="${testId}"]`)!.click();
    await fixture.whenStable();
  }

  function expectLockPost(): TestRequest {
    return backend.expectOne((request) => request.method === 'POST' && request.url === `${STUDY}/locks`);
  }

  it('shows active and past locks with each signature: printed name, meaning, UTC time and whether it is valid', async () => {
    await open();
    expect(text()).toContain('Site 101 (Harbour Lung Clinic)');
    expect(text()).toContain('Locked by Wren Halloway, 2025-03-01 10:00:00 UTC: “Site closed out”');
    expect(text()).toContain('Signed: Wren Halloway · Locked · 2025-03-01 10:00:00 UTC');
    expect(text()).toContain('Unlocked by Wren Halloway, 2025-02-02 09:00:00 UTC: “Late correction”');
    expect(text()).toContain('not valid: this signature does not match the lock');
    const alerts = Array.from((fixture.nativeElement as HTMLElement).querySelectorAll('[role="alert"]'), (alert) => alert.textContent);
    expect(alerts.join(' ')).toMatch(/signatures of this lock are not complete and valid/);
  });

  it('locks a site chosen from the list with the reason, and shows what was signed', async () => {
    await open();
    const loader = TestbedHarnessEnvironment.loader(fixture);
    await (await loader.getHarness(MatSelectHarness.with({ selector: '[data-testid="lock-scope"]' }))).clickOptions({ text: 'Site' });
    await (await loader.getHarness(MatSelectHarness.with({ selector: '[data-testid="lock-site"]' }))).clickOptions({ text: /101/ });
    await fill('lock-reason', '  Site closed out ');
    await click('lock-sign');
    const request = expectLockPost();
    expect(request.request.body).toEqual({ scope: 'site', scopeId: '101', reason: 'Site closed out' });
    request.flush(SITE_LOCK);
    await answerReload();
    expect(text()).toContain('Locked and signed: Site 101 (Harbour Lung Clinic).');
  });

  it('on 401 reauthentication-required leaves for the identity provider with the form in the return path', async () => {
    await open();
    const loader = TestbedHarnessEnvironment.loader(fixture);
    await (await loader.getHarness(MatSelectHarness.with({ selector: '[data-testid="lock-scope"]' }))).clickOptions({ text: 'Subject' });
    await fill('lock-subject', 'TM-0001');
    await fill('lock-reason', 'Subject completed');
    await click('lock-sign');
    expectLockPost().flush(
      { error: { code: 'reauthentication-required', message: 'Confirm your identity to sign.' } },
      { status: 401, statusText: 'Unauthorized' },
    );
    await fixture.whenStable();
    expect(leaveTo).toHaveBeenCalledWith(
      `/auth/reauthenticate?returnTo=${encodeURIComponent('/data-office/locks?study=study-1&pending=lock&scope=subject&target=TM-0001&reason=Subject+completed')}`,
    );
  });

  it('back from a confirmed password entry, finishes the lock it was asked for and clears the query', async () => {
    const navigate = jest.spyOn(TestBed.inject(Router), 'navigate');
    fixture = TestBed.createComponent(LocksPage);
    const query = { study: 'study-1', pending: 'lock', scope: 'subject', target: 'TM-0001', reason: 'Subject completed', reauthentication: 'confirmed' };
    for (const [name, value] of Object.entries(query)) fixture.componentRef.setInput(name, value);
    fixture.detectChanges();
    const request = expectLockPost();
    expect(request.request.body).toEqual({ scope: 'subject', scopeId: 'TM-0001', reason: 'Subject completed' });
    expect(navigate).toHaveBeenCalledWith(['/data-office/locks'], { queryParams: { study: 'study-1' }, replaceUrl: true });
    request.flush({ ...SITE_LOCK, target: 'Subject TM-0001 (site 101)' });
    await answerReload();
    expect(text()).toContain('Locked and signed: Subject TM-0001 (site 101).');
  });

  it('back from an unconfirmed re-authentication, signs nothing and keeps the unlock reason', async () => {
    await open({ study: 'study-1', pending: 'unlock', lockId: 'lock-1', reason: 'Sponsor asked to reopen', reauthentication: 'reauthentication-mismatch' });
    expect(text()).toContain('You confirmed your identity as another person than the one signed in here. Nothing was signed');
    const reason = (fixture.nativeElement as HTMLElement).querySelector<HTMLTextAreaElement>('[data-testid="unlock-reason"]')!;
    expect(reason.value).toBe('Sponsor asked to reopen');
    await click('unlock-sign');
    const request = backend.expectOne(`${STUDY}/locks/lock-1/unlock`);
    expect(request.request.body).toEqual({ reason: 'Sponsor asked to reopen' });
    request.flush({ ...SITE_LOCK, active: false });
    await answerReload();
    expect(text()).toContain('Unlocked and signed: Site 101 (Harbour Lung Clinic).');
  });

  it('shows a refusal in the server’s words, such as open queries in the scope', async () => {
    fixture = TestBed.createComponent(LocksPage);
    const query = { study: 'study-1', pending: 'lock', scope: 'study', reason: 'Database lock', reauthentication: 'confirmed' };
    for (const [name, value] of Object.entries(query)) fixture.componentRef.setInput(name, value);
    fixture.detectChanges();
    TestBed.tick();
    answerReads();
    expectLockPost().flush(
      { error: { code: 'open-queries', message: 'The whole study TM-DEMO-1 has 2 queries not closed yet (open or answered).' } },
      { status: 409, statusText: 'Conflict' },
    );
    await fixture.whenStable();
    expect(text()).toContain('has 2 queries not closed yet');
    expect(leaveTo).not.toHaveBeenCalled();
  });
});
