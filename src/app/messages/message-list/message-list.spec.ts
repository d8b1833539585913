import { afterEach, describe, expect, it } from '@jest/globals';
import { provideHttpClient, withInterceptors } from '@angular/common/http';
import { HttpTestingController, provideHttpClientTesting } from '@angular/common/http/testing';
import { TestBed } from '@angular/core/testing';
import { provideRouter } from '@angular/router';

import type { UserMessage } from '@shared/contracts/sessions';
import { errorInterceptor } from '../../core/http/error-interceptor';
import { MessageListPage } from './message-list';

// Fictional messages: one linking into the app by full address, one pointing elsewhere.
const MESSAGES: UserMessage[] = [
  {
    id: 'message-1',
    subject: 'File rejected for TM-0001, visit V1',
    body: 'The file could not be used:\n- Row 14 has no volume.',
    link: `${new URL(document.baseURI).origin}/site-desk/sessions/study-1/session-1?tab=files`,
    createdAt: '2025-01-15T08:40:00.000Z',
    delivery: 'sent',
  },
  {
    id: 'message-2',
    subject: 'Welcome',
    body: 'Your account is ready.',
    link: 'https://elsewhere.example.org/phish',
    createdAt: '2025-01-14T08:00:00.000Z',
    delivery: 'failed',
  },
];

describe('MessageListPage', () => {
  afterEach(() => TestBed.inject(HttpTestingController).verify());

  it("lists the user's messages with their text as sent and links only into this app", async () => {
    TestBed.configureTestingModule({
      providers: [provideRouter([]), provideHttpClient(withInterceptors([errorInterceptor])), provideHttpClientTesting()],
    });
    const fixture = TestBed.createComponent(MessageListPage);
    TestBed.tick();
    TestBed.inject(HttpTestingController).expectOne('/api/me/messages').flush(MESSAGES);
    await fixture.whenStable();

    const element = fixture.nativeElement as HTMLElement;
    const articles = Array.from(element.querySelectorAll('article'));
    expect(articles.map((article) => article.querySelector('h2')?.textContent?.trim())).toEqual([
      'File rejected for TM-0001, visit V1',
      'Welcome',
    ]);
    expect(articles[0].querySelector('pre')?.textContent).toBe('The file could not be used:\n- Row 14 has no volume.');
    expect(articles[0].querySelector('a')?.getAttribute('href')).toBe('/site-desk/sessions/study-1/session-1?tab=files');
    expect(articles[1].querySelector('a')).toBeNull();
    expect(articles[1].textContent).toContain('E-mail could not be delivered');
  });
});
