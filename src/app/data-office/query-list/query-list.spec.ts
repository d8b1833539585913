import { afterEach, beforeEach, describe, expect, it } from '@jest/globals';
import { provideHttpClient, withInterceptors } from '@angular/common/http';
import { HttpTestingController, provideHttpClientTesting } from '@angular/common/http/testing';
import { TestBed, type ComponentFixture } from '@angular/core/testing';
import { MATERIAL_ANIMATIONS } from '@angular/material/core';

import type { Query } from '@shared/contracts/reading';
import type { SessionSummary } from '@shared/contracts/sessions';
import { loadSession, meWithRoles } from '../../../testing/session-testing';
import { errorInterceptor } from '../../core/http/error-interceptor';
import { QueryListPage } from './query-list';

const STUDY = '/api/studies/study-1';

// Fictional queries: one answered by the site, one closed.
const ANSWERED: Query = {
  id: 'query-1',
  status: 'answered',
  question: 'The technician code differs from the visit log; which one is right?',
  requestRepeat: false,
  openedByLabel: 'Data manager (Wren Halloway)',
  openedAt: '2025-01-16T09:00:00.000Z',
  closedAt: null,
  messages: [{ id: 'message-1', authorLabel: 'Site 101 (Ada Lindqvist)', body: 'TECH-07 is right.', createdAt: '2025-01-16T10:00:00.000Z' }],
  sessionId: 'session-1',
  subjectCode: 'TM-0001',
  siteNumber: '101',
};

const SESSION: SessionSummary = {
  id: 'session-2',
  studyId: 'study-1',
  siteId: 'site-101',
  siteNumber: '101',
  subjectCode: 'TM-0002',
  visitCode: 'V2',
  timepointCode: 'T0',
  bronchodilator: 'pre',
  testedAt: '2025-01-15T08:30:00.000Z',
  timeZone: 'Europe/Oslo',
  status: 'final',
  fev1Grade: 'A',
  fvcGrade: 'A',
  effortCount: 3,
  registeredAt: '2025-01-15T08:00:00.000Z',
  updatedAt: '2025-01-15T08:40:00.000Z',
  locked: false,
};

describe('QueryListPage', () => {
  let fixture: ComponentFixture<QueryListPage>;
  let backend: HttpTestingController;

  beforeEach(async () => {
    TestBed.configureTestingModule({
      providers: [provideHttpClient(withInterceptors([errorInterceptor])), provideHttpClientTesting(), { provide: MATERIAL_ANIMATIONS, useValue: { animationsDisabled: true } }],
    });
    backend = TestBed.inject(HttpTestingController);
    await loadSession(meWithRoles(['data-manager']));
    fixture = TestBed.createComponent(QueryListPage);
    fixture.componentRef.setInput('subjectCode', 'TM-0002');
    TestBed.tick();
    backend.expectOne(`${STUDY}/queries`).flush([ANSWERED]);
    backend
      .expectOne((request) => request.url === `${STUDY}/sessions` && request.params.get('subjectCode') === 'TM-0002')
      .flush({ items: [SESSION], total: 1, page: 0, pageSize: 200 });
    await fixture.whenStable();
  });

  afterEach(() => backend.verify());

  function element(): HTMLElement {
    return fixture.nativeElement as HTMLElement;
  }
  function text(): string {
    return element().textContent?.replace(/\s+/g, ' ') ?? '';
  }
  async function type(selector: string, value: string): Promise<void> {
    const field = element().querySelector<HTMLTextAreaElement>(selector)!;
    field.value = value;
    field.dispatchEvent(new Event('input'));
    await fixture.whenStable();
  }

  it('lists each query with its subject, site, status and thread', () => {
    expect(text()).toContain('Subject TM-0001 · site 101');
    expect(text()).toContain('Answered: close it or write again');
    expect(text()).toContain('Site 101 (Ada Lindqvist)');
    expect(text()).toContain('TECH-07 is right.');
  });

  it('filters by status on the server', async () => {
    const closedToggle = Array.from(element().querySelectorAll<HTMLButtonElement>('mat-button-toggle button')).find((button) =>
      button.textContent?.includes('Closed'),
    )!;
    closedToggle.click();
    TestBed.tick();
    backend.expectOne((request) => request.url === `${STUDY}/queries` && request.params.get('status') === 'closed').flush([]);
    await fixture.whenStable();
    expect(text()).toContain('No query with this status in this study.');
  });

  it('closes a query', async () => {
    const closeButton = Array.from(element().querySelectorAll<HTMLButtonElement>('.query button')).find((button) =>
      button.textContent?.includes('Close the query'),
    )!;
    closeButton.click();
    backend.expectOne(`${STUDY}/queries/query-1/close`).flush({ ...ANSWERED, status: 'closed', closedAt: '2025-01-16T11:00:00.000Z' });
    await fixture.whenStable();
    expect(text()).toContain('Closed');
    expect(text()).not.toContain('Close the query');
  });

  it('opens a query on the session found by subject code, asking for a repeat', async () => {
    // The only session of the subject is chosen at once.
    await type('app-open-query textarea', 'Effort 3 has no plateau; please repeat the test.');
    const repeat = element().querySelector<HTMLInputElement>('app-open-query mat-checkbox input')!;
    repeat.click();
    await fixture.whenStable();
    const submit = Array.from(element().querySelectorAll<HTMLButtonElement>('app-open-query button[type="submit"]')).find((button) =>
      button.textContent?.includes('Open the query'),
    )!;
    expect(submit.disabled).toBe(false);
    submit.click();

    const request = backend.expectOne(`${STUDY}/sessions/session-2/queries`);
    expect(request.request.body).toEqual({ question: 'Effort 3 has no plateau; please repeat the test.', requestRepeat: true });
    request.flush({ ...ANSWERED, id: 'query-2', status: 'open', requestRepeat: true, messages: [], subjectCode: 'TM-0002', sessionId: 'session-2' });
    TestBed.tick();
    backend.expectOne(`${STUDY}/queries`).flush([{ ...ANSWERED, id: 'query-2', status: 'open', requestRepeat: true, subjectCode: 'TM-0002' }, ANSWERED]);
    await fixture.whenStable();
    expect(text()).toContain('Subject TM-0002 · site 101');
    expect(text()).toContain('Repeat the test requested');
  });
});
