import { afterEach, describe, expect, it } from '@jest/globals';
import { provideHttpClient, withInterceptors } from '@angular/common/http';
import { HttpTestingController, provideHttpClientTesting } from '@angular/common/http/testing';
import { TestBed, type ComponentFixture } from '@angular/core/testing';

import type { Query } from '@shared/contracts/reading';
import { errorInterceptor } from '../../core/http/error-interceptor';
import { SessionQueries } from './session-queries';

const QUERIES_URL = '/api/studies/study-1/sessions/session-1/queries';

// A fictional query from the over-reader asking for a repeat test.
const QUERY: Query = {
  id: 'query-1',
  status: 'open',
  question: 'Effort 2 looks cut short: was the subject coughing?',
  requestRepeat: true,
  openedByLabel: 'Over-reader',
  openedAt: '2025-01-16T09:00:00.000Z',
  closedAt: null,
  messages: [],
  sessionId: 'session-1',
  subjectCode: 'TM-0001',
  siteNumber: '101',
};

describe('SessionQueries', () => {
  let fixture: ComponentFixture<SessionQueries>;
  let backend: HttpTestingController;

  async function open(queries: Query[], locked = false): Promise<void> {
    TestBed.configureTestingModule({
      providers: [provideHttpClient(withInterceptors([errorInterceptor])), provideHttpClientTesting()],
    });
    backend = TestBed.inject(HttpTestingController);
    fixture = TestBed.createComponent(SessionQueries);
    fixture.componentRef.setInput('studyId', 'study-1');
    fixture.componentRef.setInput('sessionId', 'session-1');
    fixture.componentRef.setInput('timeZone', 'Europe/Oslo');
    fixture.componentRef.setInput('locked', locked);
    TestBed.tick();
    backend.expectOne(QUERIES_URL).flush(queries);
    await fixture.whenStable();
  }

  afterEach(() => backend.verify());

  function element(): HTMLElement {
    return fixture.nativeElement as HTMLElement;
  }
  function text(): string {
    return element().textContent?.replace(/\s+/g, ' ') ?? '';
  }

  it('says so when there is no query', async () => {
    await open([]);
    expect(text()).toContain('No query on this session.');
  });

  it('shows the question, the repeat request and the reader only as the over-reader', async () => {
    await open([QUERY]);
    expect(text()).toContain('Waiting for your answer');
    expect(text()).toContain('Asked by the over-reader');
    expect(element().querySelector('.repeat[role="note"]')?.textContent).toContain('Repeat the test requested.');
    expect(text()).toContain('Effort 2 looks cut short');
  });

  it('sends an answer and shows the query as answered', async () => {
    await open([QUERY]);
    const button = element().querySelector<HTMLButtonElement>('form.answer button[type="submit"]')!;
    expect(button.disabled).toBe(true);
    const textarea = element().querySelector<HTMLTextAreaElement>('form.answer textarea')!;
    textarea.value = 'The subject coughed; we repeat the test tomorrow.';
    textarea.dispatchEvent(new Event('input'));
    await fixture.whenStable();
    expect(button.disabled).toBe(false);
    button.click();

    const request = backend.expectOne(`/api/studies/study-1/queries/query-1/answers`);
    expect(request.request.body).toEqual({ body: 'The subject coughed; we repeat the test tomorrow.' });
    request.flush({
      ...QUERY,
      status: 'answered',
      messages: [{ id: 'message-1', authorLabel: 'Site', body: 'The subject coughed; we repeat the test tomorrow.', createdAt: '2025-01-16T10:00:00.000Z' }],
    });
    await fixture.whenStable();
    expect(text()).toContain('Answered; with the study team');
    expect(text()).toContain('Your site');
    expect(textarea.value).toBe('');
  });

  it('explains a refusal in words and reads the queries again', async () => {
    await open([QUERY]);
    const textarea = element().querySelector<HTMLTextAreaElement>('form.answer textarea')!;
    textarea.value = 'Our answer.';
    textarea.dispatchEvent(new Event('input'));
    await fixture.whenStable();
    element().querySelector<HTMLButtonElement>('form.answer button[type="submit"]')!.click();
    backend
      .expectOne(`/api/studies/study-1/queries/query-1/answers`)
      .flush({ error: { code: 'query-closed', message: 'This query was closed; nothing was changed.' } }, { status: 409, statusText: 'Conflict' });
    TestBed.tick();
    backend.expectOne(QUERIES_URL).flush([{ ...QUERY, status: 'closed', closedAt: '2025-01-16T11:00:00.000Z' }]);
    await fixture.whenStable();
    expect(element().querySelector('[role="alert"]')?.textContent).toContain('This query was closed; nothing was changed.');
    expect(text()).toContain('Closed');
    expect(element().querySelector('form.answer')).toBeNull();
  });

  it('offers no answer form on a locked session', async () => {
    await open([QUERY], true);
    expect(element().querySelector('form.answer')).toBeNull();
    expect(text()).toContain('The data of this session is locked');
  });
});
