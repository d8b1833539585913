import { afterEach, beforeEach, describe, expect, it, jest } from '@jest/globals';
import { provideHttpClient, withInterceptors } from '@angular/common/http';
import { HttpTestingController, provideHttpClientTesting } from '@angular/common/http/testing';
import { TestBed, type ComponentFixture } from '@angular/core/testing';
import { provideRouter } from '@angular/router';

import type { EffortSummary, SessionCurves, SessionDetail } from '@shared/contracts/sessions';
import { errorInterceptor } from '../../core/http/error-interceptor';
import { SessionDetailPage } from './session-detail';

// The page draws curves through the loader; a stand-in keeps plotly (and a canvas) out of jsdom.
const react = jest.fn(async (element: HTMLElement) => Object.assign(element, { on: jest.fn() }));
jest.mock('../../ui/effort-curves/plotly-loader', () => ({
  loadPlotly: () => Promise.resolve({ react, purge: jest.fn() }),
}));

const BASE = '/api/studies/study-1';

function effort(index: number, overrides: Partial<EffortSummary> = {}): EffortSummary {
  return {
    id: `effort-${index}`,
    index,
    label: `Effort ${index + 1}`,
    signal: 'volume',
    sampleRateHz: 100,
    timeZeroS: 0.02,
    bevL: 0.06,
    fev1L: 2.81,
    fvcL: 3.52,
    fev6L: 3.5,
    pefLPerS: 7.4,
    fef2575LPerS: 2.9,
    fetS: 7.2,
    endOfTestMet: true,
    suggestedFev1Verdict: 'acceptable',
    suggestedFvcVerdict: 'acceptable',
    findings: [],
    verdictReasons: { fev1: [], fvc: [] },
    ...overrides,
  };
}

// A fictional checked session with two efforts, the second with a finding.
const SESSION: SessionDetail = {
  id: 'session-1',
  studyId: 'study-1',
  siteId: 'site-101',
  siteNumber: '101',
  subjectCode: 'TM-0001',
  visitCode: 'V2',
  timepointCode: 'T0',
  bronchodilator: 'post',
  testedAt: '2025-01-15T08:30:00.000Z',
  timeZone: 'Europe/Oslo',
  status: 'checked',
  fev1Grade: 'E',
  fvcGrade: 'E',
  effortCount: 2,
  registeredAt: '2025-01-15T08:00:00.000Z',
  updatedAt: '2025-01-15T08:40:00.000Z',
  locked: false,
  demographics: { ageYears: 54, heightCm: 172, weightKg: 70, sex: 'female', ethnicity: 'caucasian' },
  technicianCode: 'TECH-7',
  device: { manufacturer: 'Example Instruments', model: 'Flow 2', serialNumber: 'SN-42' },
  registeredBy: 'Wren Halloway',
  rejectionReasons: [],
  check: {
    protocolId: 'demo-protocol',
    protocolVersion: 1,
    fev1Grade: 'E',
    fvcGrade: 'E',
    reportedFev1L: 2.81,
    reportedFvcL: 3.52,
    fev1FvcRatio: 0.798,
    notes: ['Only one acceptable effort.'],
  },
  efforts: [
    effort(0),
    effort(1, {
      suggestedFev1Verdict: 'not_acceptable',
      findings: [{ code: 'cough', message: 'A cough in the first second.', values: {} }],
      verdictReasons: { fev1: ['A cough in the first second.'], fvc: [] },
    }),
  ],
  uploads: [],
  lock: null,
};

const CURVES: SessionCurves = {
  efforts: [0, 1].map((index) => ({
    index,
    label: `Effort ${index + 1}`,
    timeS: [0, 1],
    volumeL: [0, 3],
    flowLPerS: [0, 5],
    backExtrapolation: { timeS: [0, 0.1], volumeL: [0, 0.2] },
  })),
};

describe('SessionDetailPage', () => {
  let fixture: ComponentFixture<SessionDetailPage>;
  let backend: HttpTestingController;

  beforeEach(() => {
    TestBed.configureTestingModule({
      providers: [provideRouter([]), provideHttpClient(withInterceptors([errorInterceptor])), provideHttpClientTesting()],
    });
    backend = TestBed.inject(HttpTestingController);
    fixture = TestBed.createComponent(SessionDetailPage);
    fixture.componentRef.setInput('studyId', 'study-1');
    fixture.componentRef.setInput('sessionId', 'session-1');
    react.mockClear();
  });

  afterEach(() => backend.verify());

  function text(): string {
    return (fixture.nativeElement as HTMLElement).textContent?.replace(/\s+/g, ' ') ?? '';
  }

  async function open(session: SessionDetail): Promise<void> {
    TestBed.tick();
    backend.expectOne(`${BASE}/schedule`).flush({ visits: [{ code: 'V2', name: 'Week 4', dayOffset: 28, windowBeforeDays: 3, windowAfterDays: 3 }], timepoints: [] });
    backend.expectOne(`${BASE}/sessions/session-1`).flush(session);
    // The resource takes the answer in a later task; only then does it know to ask for curves.
    await new Promise((resolve) => setTimeout(resolve));
    TestBed.tick();
    if (session.efforts.length) backend.expectOne(`${BASE}/sessions/session-1/curves`).flush(CURVES);
    backend.expectOne(`${BASE}/sessions/session-1/queries`).flush([]);
    await fixture.whenStable();
  }

  it('shows who, when, the check in words and the efforts, with the caution beside the results', async () => {
    await open(SESSION);
    expect(text()).toContain('Subject TM-0001 · Week 4 (V2)');
    expect(text()).toContain('After bronchodilator');
    expect(text()).toContain('Grade E (acceptable efforts that do not agree, or only one acceptable effort)');
    expect(text()).toContain('80%');
    expect(text()).toContain('Not acceptable');
    expect(text()).toContain('A cough in the first second.');
    expect(text()).toContain('No query on this session.');
    expect(text()).toContain('No feedback yet.');
    expect((fixture.nativeElement as HTMLElement).querySelector('app-caution-note')).not.toBeNull();
    // A checked session takes no new file here.
    expect((fixture.nativeElement as HTMLElement).querySelector('app-session-file-upload')).toBeNull();
  });

  it('highlights the effort chosen in the table on the curves', async () => {
    await open(SESSION);
    const buttons = Array.from((fixture.nativeElement as HTMLElement).querySelectorAll<HTMLButtonElement>('app-effort-table button'));
    expect(buttons.map((button) => button.getAttribute('aria-pressed'))).toEqual(['true', 'false']);
    react.mockClear();

    buttons[1].click();
    await fixture.whenStable();
    await new Promise((resolve) => setTimeout(resolve));

    expect(buttons.map((button) => button.getAttribute('aria-pressed'))).toEqual(['false', 'true']);
    const lastDrawn = react.mock.calls.at(-1) as unknown as [HTMLElement, { name: string }[]];
    expect(lastDrawn[1].at(-1)?.name).toBe('Effort 2');
  });

  it('offers the upload box to a session awaiting its file', async () => {
    await open({ ...SESSION, status: 'awaiting-file', check: null, efforts: [], effortCount: 0 });
    expect(text()).toContain('Upload the session file');
    expect(text()).toContain('No automated check yet');
    expect((fixture.nativeElement as HTMLElement).querySelector('app-session-file-upload')).not.toBeNull();
  });
});
