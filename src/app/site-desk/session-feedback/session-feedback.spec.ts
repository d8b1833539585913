import { afterEach, describe, expect, it } from '@jest/globals';
import { provideHttpClient, withInterceptors } from '@angular/common/http';
import { HttpTestingController, provideHttpClientTesting } from '@angular/common/http/testing';
import { TestBed, type ComponentFixture } from '@angular/core/testing';

import type { SiteFeedback } from '@shared/contracts/reading';
import { errorInterceptor } from '../../core/http/error-interceptor';
import { SessionFeedback } from './session-feedback';

const FEEDBACK_URL = '/api/studies/study-1/sessions/session-1/feedback';

// A fictional final read: two efforts, the first judged down with a slow start.
const FEEDBACK: SiteFeedback = {
  sessionId: 'session-1',
  releasedAt: '2025-01-16T09:00:00.000Z',
  result: {
    fev1Grade: 'E',
    fvcGrade: 'E',
    reportedFev1L: 2.81,
    reportedFvcL: 3.52,
    fev1FvcRatio: 0.798,
    fev1EffortIndex: 1,
    fvcEffortIndex: 1,
    endpointEligible: { fev1: false, fvc: false, reasons: ['FEV1 grade E is below the study minimum C'] },
  },
  feedbackText: 'Good cooperation; watch the start of each blow.',
  sessionCoaching: ['Too few acceptable efforts that agree: aim for at least three acceptable efforts.'],
  efforts: [
    {
      index: 0,
      label: 'Effort 1',
      fev1Verdict: 'not_acceptable',
      fvcVerdict: 'usable',
      coaching: ['Slow start: coach a faster, more forceful blast from full inspiration.'],
      comment: 'Hesitant start.',
    },
    { index: 1, label: 'Effort 2', fev1Verdict: 'acceptable', fvcVerdict: 'acceptable', coaching: [], comment: '' },
  ],
  signature: { printedName: 'Central over-reader', meaning: 'authored', signedAt: '2025-01-16T08:59:00.000Z', valid: true },
  caution: 'These results support, and do not replace, review by qualified staff.',
};

describe('SessionFeedback', () => {
  let fixture: ComponentFixture<SessionFeedback>;
  let backend: HttpTestingController;

  function create(final: boolean): void {
    TestBed.configureTestingModule({
      providers: [provideHttpClient(withInterceptors([errorInterceptor])), provideHttpClientTesting()],
    });
    backend = TestBed.inject(HttpTestingController);
    fixture = TestBed.createComponent(SessionFeedback);
    fixture.componentRef.setInput('studyId', 'study-1');
    fixture.componentRef.setInput('sessionId', 'session-1');
    fixture.componentRef.setInput('timeZone', 'Europe/Oslo');
    fixture.componentRef.setInput('final', final);
    TestBed.tick();
  }

  afterEach(() => backend.verify());

  function element(): HTMLElement {
    return fixture.nativeElement as HTMLElement;
  }
  function text(): string {
    return element().textContent?.replace(/\s+/g, ' ') ?? '';
  }

  it('asks for nothing before the read is final, and says what will come', async () => {
    create(false);
    backend.expectNone(FEEDBACK_URL);
    await fixture.whenStable();
    expect(text()).toContain('No feedback yet.');
  });

  it('shows grades, reported values, coaching per effort, the signature, the caution and the PDF link', async () => {
    create(true);
    backend.expectOne(FEEDBACK_URL).flush(FEEDBACK);
    await fixture.whenStable();
    expect(text()).toContain('Grade E (acceptable efforts that do not agree, or only one acceptable effort)');
    expect(text()).toContain('2.81 L (Effort 2)');
    expect(text()).toContain('80%');
    expect(text()).toContain('Too few acceptable efforts that agree');
    expect(text()).toContain('Good cooperation; watch the start of each blow.');
    expect(text()).toContain('FEV1 not acceptable');
    expect(text()).toContain('Slow start: coach a faster, more forceful blast');
    expect(text()).toContain('Over-reader: Hesitant start.');
    expect(text()).toContain('No remarks.');
    expect(text()).toContain('Signed electronically by Central over-reader (meaning: authored)');
    expect(element().querySelector('[role="note"][aria-label="Caution"]')?.textContent).toContain('do not replace, review by qualified staff');
    const link = element().querySelector<HTMLAnchorElement>('a.pdf-link')!;
    expect(link.getAttribute('href')).toBe(`${FEEDBACK_URL}.pdf`);
    expect(link.textContent).toContain('Download PDF report');
  });

  it('warns when the signature no longer matches the read', async () => {
    create(true);
    backend.expectOne(FEEDBACK_URL).flush({ ...FEEDBACK, signature: { ...FEEDBACK.signature, valid: false } });
    await fixture.whenStable();
    expect(text()).toContain('The signature is not valid');
  });
});
