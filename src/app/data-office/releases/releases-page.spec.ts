import { afterEach, beforeEach, describe, expect, it, jest } from '@jest/globals';
import { provideHttpClient, withInterceptors } from '@angular/common/http';
import { HttpTestingController, provideHttpClientTesting, type TestRequest } from '@angular/common/http/testing';
import { TestbedHarnessEnvironment } from '@angular/cdk/testing/testbed';
import { TestBed, type ComponentFixture } from '@angular/core/testing';
import { MATERIAL_ANIMATIONS } from '@angular/material/core';
import { MatSelectHarness } from '@angular/material/select/testing';
import { Router, provideRouter } from '@angular/router';

import type { ReleaseProgress, ReleaseSummary } from '@shared/contracts/releases';
import type { Schedule } from '@shared/contracts/sessions';
import type { Site } from '@shared/contracts/studies';
import { loadSession, meWithRoles } from '../../../testing/session-testing';
import { errorInterceptor } from '../../core/http/error-interceptor';
import { PageLeave } from '../locks/page-leave';
import { RELEASE_POLL_INTERVAL_MS } from './release-progress';
import { ReleasesPage } from './releases-page';

const STUDY = '/api/studies/study-1';
/** Short, so that the spec waits little in real time. */
const POLL_INTERVAL_MS = 10;
const RELEASE_ID = '3f1c2d4e-5a6b-4c7d-8e9f-0a1b2c3d4e5f';

// Fictional sites, schedule and releases.
const SITES: Site[] = [
  { id: 'site-101', studyId: 'study-1', number: '101', name: 'Harbour Lung Clinic', countryCode: 'NO', timeZone: 'Europe/Oslo' },
  { id: 'site-102', studyId: 'study-1', number: '102', name: 'Fjord Chest Unit', countryCode: 'NO', timeZone: 'Europe/Oslo' },
];
const SCHEDULE: Schedule = {
  visits: [
    { code: 'V1', name: 'Screening', dayOffset: -7, windowBeforeDays: 3, windowAfterDays: 3 },
    { code: 'V2', name: 'Week 4', dayOffset: 28, windowBeforeDays: 3, windowAfterDays: 3 },
  ],
  timepoints: [{ code: 'T0', name: 'Pre-dose' }],
};
const COMPLETE: ReleaseSummary = {
  releaseId: '0b9a8c7d-6e5f-4a3b-9c2d-1e0f9a8b7c6d',
  status: 'complete',
  requestedAt: '2025-03-01T10:00:00.000Z',
  requestedBy: 'Wren Halloway',
  // Signed a little before the request was audited: the row shows the signing time.
  signature: { signatureId: 'signature-1', printedName: 'Wren Halloway', meaning: 'released', signedAt: '2025-03-01T09:59:59.400Z' },
  reason: 'Interim analysis',
  scope: { siteIds: ['site-101'], visitCodes: ['V2'] },
  dataCutAt: '2025-03-01T10:00:00.000Z',
  sessionCount: 12,
  completedAt: '2025-03-01T10:00:04.000Z',
  manifestSha256: 'a'.repeat(64),
  files: [
    { name: 're.csv', sizeBytes: 2048, sha256: 'b'.repeat(64) },
    { name: 're.xpt', sizeBytes: 4000, sha256: 'c'.repeat(64) },
  ],
  error: null,
};
const progress = (overrides: Partial<ReleaseProgress>): ReleaseProgress => ({
  releaseId: RELEASE_ID,
  status: 'running',
  phase: 'Starting',
  percent: 0,
  startedAt: '2025-03-02T09:00:00.000Z',
  finishedAt: null,
  elapsedMs: 0,
  sessionCount: 12,
  error: null,
  ...overrides,
});
const RUNNING: ReleaseSummary = { ...COMPLETE, releaseId: RELEASE_ID, status: 'running', completedAt: null, manifestSha256: null, files: [], reason: null, scope: { siteIds: null, visitCodes: null } };

describe('ReleasesPage', () => {
  let fixture: ComponentFixture<ReleasesPage>;
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
        { provide: RELEASE_POLL_INTERVAL_MS, useValue: POLL_INTERVAL_MS },
      ],
    });
    backend = TestBed.inject(HttpTestingController);
    await loadSession(meWithRoles(['data-manager']));
  });

  afterEach(() => backend.verify());

  /** Creates the page with these query parameters and answers its first reads. */
  async function open(query: Record<string, string | string[]> = {}, list: ReleaseSummary[] = [COMPLETE]): Promise<void> {
    fixture = TestBed.createComponent(ReleasesPage);
    for (const [name, value] of Object.entries(query)) fixture.componentRef.setInput(name, value);
    fixture.detectChanges();
    await answerUntilQuiet(list);
  }

  function answerReads(list: ReleaseSummary[]): void {
    const reads = (url: string) => backend.match((request) => request.method === 'GET' && request.url === url);
    reads(`${STUDY}/releases`).forEach((request) => request.flush(list));
    reads(`${STUDY}/sites`).forEach((request) => request.flush(SITES));
    reads(`${STUDY}/schedule`).forEach((request) => request.flush(SCHEDULE));
  }

  /**
   * Answers the page's reads, then those its rows make once rendered (the table renders after
   * change detection), until none is left; pending requests would keep whenStable waiting.
   */
  async function answerUntilQuiet(list: ReleaseSummary[]): Promise<void> {
    for (let round = 0; round < 5; round++) {
      TestBed.tick();
      await new Promise((resolve) => setTimeout(resolve, 0));
      answerReads(list);
    }
    await fixture.whenStable();
  }

  function text(): string {
    return (fixture.nativeElement as HTMLElement).textContent?.replace(/\s+/g, ' ') ?? '';
  }

  async function click(testId: string): Promise<void> {
    (fixture.nativeElement as HTMLElement).querySelector<HTMLButtonElement>(`[data-testid="${testId}"]`)!.click();
    await fixture.whenStable();
  }

  async function fill(testId: string, value: string): Promise<void> {
    const field = (fixture.nativeElement as HTMLElement).querySelector<HTMLTextAreaElement>(`[data-testid="${testId}"]`)!;
    field.value = value;
    field.dispatchEvent(new Event('input'));
    await fixture.whenStable();
  }

  function expectReleasePost(): TestRequest {
    return backend.expectOne((request) => request.method === 'POST' && request.url === `${STUDY}/releases`);
  }

  /** Waits (in real time) for the progress bar's next question. */
  async function nextProgressPoll(): Promise<TestRequest> {
    const url = `${STUDY}/releases/${RELEASE_ID}/progress`;
    for (let attempt = 0; attempt < 200; attempt++) {
      const [request] = backend.match(url);
      if (request) return request;
      await new Promise((resolve) => setTimeout(resolve, 5));
    }
    throw new Error(`no request to ${url}`);
  }

  it('lists each release with its id, UTC time, signature, scope in site numbers, file count and status', async () => {
    await open();
    const row = (fixture.nativeElement as HTMLElement).querySelector('[data-testid="release-row"]')!.textContent!.replace(/\s+/g, ' ');
    expect(row).toContain(COMPLETE.releaseId);
    expect(row).toContain('“Interim analysis”');
    // The signing time is the signature's, not the time the request was audited.
    expect(row).toContain('Wren Halloway · Released · 2025-03-01 09:59:59 UTC');
    expect(row).toContain('Site 101 · visit V2');
    expect(row).toContain('12 sessions');
    expect(row).toContain('Ready');
    expect((fixture.nativeElement as HTMLElement).querySelector('[data-testid="release-file-count"]')!.textContent!.trim()).toBe('2');
  });

  it('sends the chosen sites and visits with the reason, then follows the build until it is ready', async () => {
    await open();
    await click('new-release');
    const loader = TestbedHarnessEnvironment.loader(fixture);
    await (await loader.getHarness(MatSelectHarness.with({ selector: '[data-testid="release-sites"]' }))).clickOptions({ text: /102/ });
    await (await loader.getHarness(MatSelectHarness.with({ selector: '[data-testid="release-visits"]' }))).clickOptions({ text: /V1/ });
    await fill('release-reason', ' Week 4 analysis ');
    expect(text()).toContain('To release: Site 102 · visit V1 of TM-DEMO-1');
    await click('release-sign');
    const request = expectReleasePost();
    expect(request.request.body).toEqual({ scope: { siteIds: ['site-102'], visitCodes: ['V1'] }, reason: 'Week 4 analysis' });
    request.flush({ release: RUNNING, progress: progress({}), progressUrl: `${STUDY}/releases/${RELEASE_ID}/progress` }, { status: 202, statusText: 'Accepted' });
    // From here a progress question may be pending, and pending requests keep whenStable waiting: render with tick instead.
    TestBed.tick();
    answerReads([RUNNING, COMPLETE]);

    (await nextProgressPoll()).flush(progress({ phase: 'Writing the CSV tables and SDTM RE', percent: 42.5, elapsedMs: 1500 }));
    TestBed.tick();
    expect(text()).toContain('Writing the CSV tables and SDTM RE…');
    expect(text()).toContain('42.5 %');
    expect(text()).not.toContain('Open the release');

    (await nextProgressPoll()).flush(progress({ status: 'complete', phase: 'Done', percent: 100, elapsedMs: 3200, finishedAt: '2025-03-02T09:00:03.200Z' }));
    TestBed.tick();
    await answerUntilQuiet([{ ...RUNNING, status: 'complete' }, COMPLETE]);
    expect(text()).toContain('Release ready: 12 locked sessions in 3.2 s.');
    const link = (fixture.nativeElement as HTMLElement).querySelector<HTMLAnchorElement>('[data-testid="open-release"]')!;
    expect(link.getAttribute('href')).toBe(`/data-office/releases/study-1/${RELEASE_ID}`);
    // The build has ended: no further question is asked.
    await new Promise((resolve) => setTimeout(resolve, 5 * POLL_INTERVAL_MS));
    backend.expectNone(`${STUDY}/releases/${RELEASE_ID}/progress`);
  });

  it('on 401 reauthentication-required leaves for the identity provider with the form in the return path', async () => {
    await open();
    await click('new-release');
    const loader = TestbedHarnessEnvironment.loader(fixture);
    await (await loader.getHarness(MatSelectHarness.with({ selector: '[data-testid="release-visits"]' }))).clickOptions({ text: /V2/ });
    await fill('release-reason', 'Interim');
    await click('release-sign');
    expectReleasePost().flush(
      { error: { code: 'reauthentication-required', message: 'Confirm your identity to sign.' } },
      { status: 401, statusText: 'Unauthorized' },
    );
    await fixture.whenStable();
    expect(leaveTo).toHaveBeenCalledWith(
      `/auth/reauthenticate?returnTo=${encodeURIComponent('/data-office/releases?study=study-1&pending=release&visit=V2&reason=Interim')}`,
    );
  });

  it('back from a confirmed password entry, asks for the release it was asked for and clears the query', async () => {
    const navigate = jest.spyOn(TestBed.inject(Router), 'navigate');
    fixture = TestBed.createComponent(ReleasesPage);
    const query = { study: 'study-1', pending: 'release', site: ['site-101', 'site-102'], reason: 'Interim', reauthentication: 'confirmed' };
    for (const [name, value] of Object.entries(query)) fixture.componentRef.setInput(name, value);
    fixture.detectChanges();
    const request = expectReleasePost();
    expect(request.request.body).toEqual({ scope: { siteIds: ['site-101', 'site-102'] }, reason: 'Interim' });
    expect(navigate).toHaveBeenCalledWith(['/data-office/releases'], { queryParams: { study: 'study-1' }, replaceUrl: true });
    request.flush({ release: RUNNING, progress: progress({ percent: 5 }), progressUrl: '' }, { status: 202, statusText: 'Accepted' });
    TestBed.tick();
    answerReads([RUNNING]);
    expect(text()).toContain(`Building release ${RELEASE_ID}`);
    expect(text()).toContain('5 %');
    (await nextProgressPoll()).flush(progress({ status: 'failed', phase: 'Failed', error: 'The released data changed while the files were being written.' }));
    TestBed.tick();
    answerReads([{ ...RUNNING, status: 'failed' }]);
    await fixture.whenStable();
    expect(text()).toContain('The released data changed while the files were being written.');
    expect(text()).not.toContain('Open the release');
  });

  it('back from an unconfirmed re-authentication, sends nothing and keeps the form', async () => {
    await open({ study: 'study-1', pending: 'release', visit: 'V2', reason: 'Interim', reauthentication: 'reauthentication-mismatch' });
    expect(text()).toContain('You confirmed your identity as another person than the one signed in here. Nothing was signed');
    expect((fixture.nativeElement as HTMLElement).querySelector<HTMLTextAreaElement>('[data-testid="release-reason"]')!.value).toBe('Interim');
    expect(text()).toContain('To release: Visit V2 of TM-DEMO-1');
  });

  it('shows a refusal in the server’s words, such as data not locked', async () => {
    await open();
    await click('new-release');
    await click('release-sign');
    expectReleasePost().flush(
      { error: { code: 'not-locked', message: 'Only locked data with final reads can be released: 3 sessions are not locked.' } },
      { status: 409, statusText: 'Conflict' },
    );
    await fixture.whenStable();
    expect(text()).toContain('3 sessions are not locked');
    expect(leaveTo).not.toHaveBeenCalled();
  });

  it('offers no new release while one of the study is being built', async () => {
    await open({}, [RUNNING, COMPLETE]);
    expect((fixture.nativeElement as HTMLElement).querySelector<HTMLButtonElement>('[data-testid="new-release"]')!.disabled).toBe(true);
    expect(text()).toContain('A release of this study is being built');
  });
});
