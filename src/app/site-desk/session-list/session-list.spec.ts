import { afterEach, beforeEach, describe, expect, it } from '@jest/globals';
import { provideHttpClient, withInterceptors } from '@angular/common/http';
import { HttpTestingController, provideHttpClientTesting, type TestRequest } from '@angular/common/http/testing';
import { TestBed, type ComponentFixture } from '@angular/core/testing';
import { provideRouter } from '@angular/router';

import type { Schedule, SessionPage, SessionSummary } from '@shared/contracts/sessions';
import { errorInterceptor } from '../../core/http/error-interceptor';
import { SessionList } from './session-list';

const SESSIONS_URL = '/api/studies/study-1/sessions';

// Fictional schedule and sessions; Europe/Oslo is CET (UTC+01:00) in January (IANA tz database).
const SCHEDULE: Schedule = {
  visits: [
    { code: 'V1', name: 'Screening', dayOffset: -14, windowBeforeDays: 7, windowAfterDays: 0 },
    { code: 'V2', name: 'Week 4', dayOffset: 28, windowBeforeDays: 3, windowAfterDays: 3 },
  ],
  timepoints: [{ code: 'T0', name: 'Before dosing' }],
};

function session(overrides: Partial<SessionSummary>): SessionSummary {
  return {
    id: 'session-1',
    studyId: 'study-1',
    siteId: 'site-101',
    siteNumber: '101',
    subjectCode: 'TM-0001',
    visitCode: 'V1',
    timepointCode: 'T0',
    bronchodilator: 'pre',
    testedAt: '2025-01-15T08:30:00.000Z',
    timeZone: 'Europe/Oslo',
    status: 'checked',
    fev1Grade: 'A',
    fvcGrade: 'B',
    effortCount: 3,
    registeredAt: '2025-01-15T08:00:00.000Z',
    updatedAt: '2025-01-15T08:40:00.000Z',
    locked: false,
    ...overrides,
  };
}

const FIRST_PAGE: SessionPage = {
  items: [
    session({}),
    session({
      id: 'session-2',
      subjectCode: 'TM-0002',
      visitCode: 'V2',
      status: 'awaiting-file',
      fev1Grade: null,
      fvcGrade: null,
      effortCount: 0,
    }),
  ],
  total: 60,
  page: 0,
  pageSize: 25,
};

describe('SessionList', () => {
  let fixture: ComponentFixture<SessionList>;
  let backend: HttpTestingController;

  beforeEach(() => {
    TestBed.configureTestingModule({
      providers: [provideRouter([]), provideHttpClient(withInterceptors([errorInterceptor])), provideHttpClientTesting()],
    });
    backend = TestBed.inject(HttpTestingController);
    fixture = TestBed.createComponent(SessionList);
    fixture.componentRef.setInput('studyId', 'study-1');
    fixture.componentRef.setInput('siteId', 'site-101');
    TestBed.tick();
    backend.expectOne('/api/studies/study-1/schedule').flush(SCHEDULE);
  });

  afterEach(() => backend.verify());

  /** The one pending list request, with its query parameters as a plain object. */
  function nextListRequest(): { request: TestRequest; params: Record<string, string | null> } {
    TestBed.tick();
    const request = backend.expectOne((candidate) => candidate.url === SESSIONS_URL);
    const params = request.request.params;
    return { request, params: Object.fromEntries(params.keys().map((key) => [key, params.get(key)])) };
  }

  function element(): HTMLElement {
    return fixture.nativeElement as HTMLElement;
  }

  /** Opens a select (the harness would wait for the list request this very choice sends). */
  function chooseOption(triggerSelector: string, optionText: string): void {
    element().querySelector<HTMLElement>(triggerSelector)!.click();
    TestBed.tick();
    const option = Array.from(document.querySelectorAll<HTMLElement>('mat-option')).find(
      (candidate) => candidate.textContent?.trim() === optionText,
    );
    option!.click();
  }

  /** Answers the pending list request and lets the page render the answer. */
  async function answer(body: Parameters<TestRequest['flush']>[0], init?: { status: number; statusText: string }): Promise<void> {
    nextListRequest().request.flush(body, init);
    await fixture.whenStable();
  }

  it('asks for the first page of the site, most recent tests first', async () => {
    const { request, params } = nextListRequest();
    expect(request.request.method).toBe('GET');
    expect(params).toEqual({ siteId: 'site-101', sort: 'testedAt', direction: 'desc', page: '0', pageSize: '25' });
    request.flush(FIRST_PAGE);
  });

  it('shows status in words beside its icon, grades, efforts and the site-clock time', async () => {
    await answer(FIRST_PAGE);
    const rows = Array.from(element().querySelectorAll('tr.session-row'));
    expect(rows).toHaveLength(2);
    const [checked, awaiting] = rows.map((row) => row.textContent?.replace(/\s+/g, ' ') ?? '');
    expect(checked).toContain('Checked');
    expect(checked).toContain('FEV1 A');
    expect(checked).toContain('Screening');
    expect(checked).toMatch(/09:30/);
    expect(awaiting).toContain('Awaiting file');
    expect(awaiting).toContain('Not graded yet');
    expect(rows[0].querySelector('mat-icon')?.textContent?.trim()).toBe('task_alt');
  });

  it('sends the sort chosen in a column header and starts again at the first page', async () => {
    await answer(FIRST_PAGE);
    element().querySelector<HTMLElement>('.mat-mdc-paginator-navigation-next')!.click();
    const secondPage = nextListRequest();
    expect(secondPage.params).toMatchObject({ page: '1', sort: 'testedAt' });
    secondPage.request.flush({ ...FIRST_PAGE, page: 1 });
    await fixture.whenStable();

    const subjectHeader = Array.from(element().querySelectorAll<HTMLElement>('th[mat-sort-header]')).find((header) =>
      header.textContent?.includes('Subject'),
    );
    subjectHeader!.click();
    const { request, params } = nextListRequest();
    expect(params).toEqual({ siteId: 'site-101', sort: 'subjectCode', direction: 'asc', page: '0', pageSize: '25' });
    request.flush(FIRST_PAGE);
  });

  it('sends the page and page size chosen in the paginator', async () => {
    await answer(FIRST_PAGE);
    element().querySelector<HTMLElement>('.mat-mdc-paginator-navigation-next')!.click();
    const secondPage = nextListRequest();
    expect(secondPage.params).toMatchObject({ page: '1', pageSize: '25' });
    secondPage.request.flush({ ...FIRST_PAGE, page: 1 });
    await fixture.whenStable();

    chooseOption('.mat-mdc-paginator-page-size-select .mat-mdc-select-trigger', '50');
    const { request, params } = nextListRequest();
    expect(params).toMatchObject({ page: '0', pageSize: '50' });
    request.flush({ ...FIRST_PAGE, pageSize: 50 });
  });

  it('sends the status filter and goes back to the first page', async () => {
    await answer(FIRST_PAGE);
    element().querySelector<HTMLElement>('.mat-mdc-paginator-navigation-next')!.click();
    await answer({ ...FIRST_PAGE, page: 1 });

    chooseOption('.filters mat-select .mat-mdc-select-trigger', 'Rejected');
    const { request, params } = nextListRequest();
    expect(params).toEqual({ siteId: 'site-101', status: 'rejected', sort: 'testedAt', direction: 'desc', page: '0', pageSize: '25' });
    request.flush({ ...FIRST_PAGE, items: [], total: 0 });
    await fixture.whenStable();
    expect(element().textContent).toContain('No session matches these filters.');
  });

  it('sends the subject code once typing pauses', async () => {
    await answer(FIRST_PAGE);
    const subjectInput = element().querySelector<HTMLInputElement>('input[type="search"]')!;
    subjectInput.value = ' TM-00 ';
    subjectInput.dispatchEvent(new Event('input'));
    TestBed.tick();
    backend.expectNone((candidate) => candidate.url === SESSIONS_URL);

    // Longer than the list's typing pause; its timer was set first, so it fires first.
    await new Promise((resolve) => setTimeout(resolve, 350));
    const { request, params } = nextListRequest();
    expect(params).toMatchObject({ subjectCode: 'TM-00', page: '0' });
    request.flush(FIRST_PAGE);
  });

  it("says so in words when the server refuses, with the server's message", async () => {
    await answer(
      { error: { code: 'forbidden', message: 'This site is not one of yours.' } },
      { status: 403, statusText: 'Forbidden' },
    );
    expect(element().querySelector('[role="alert"]')?.textContent?.trim()).toBe('This site is not one of yours.');
  });
});
