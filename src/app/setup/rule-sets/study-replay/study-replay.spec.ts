import { afterEach, beforeEach, describe, expect, it } from '@jest/globals';
import { provideHttpClient, withInterceptors } from '@angular/common/http';
import { HttpTestingController, provideHttpClientTesting } from '@angular/common/http/testing';
import { TestBed, type ComponentFixture } from '@angular/core/testing';
import { TestbedHarnessEnvironment } from '@angular/cdk/testing/testbed';
import { MatSelectHarness } from '@angular/material/select/testing';
import { provideRouter } from '@angular/router';

import type { ReplayResult, RuleSetSummary } from '@shared/contracts/protocols';
import { loadSession, meWithRoles } from '../../../../testing/session-testing';
import { errorInterceptor } from '../../../core/http/error-interceptor';
import { StudyReplayPage } from './study-replay';

const summary = (id: string, title: string, problem: string | null = null): RuleSetSummary => ({
  id,
  version: 1,
  fileName: `${id}.v1.json`,
  title: problem ? null : title,
  basedOn: problem ? null : 'ATS/ERS 2019',
  notes: null,
  ruleCount: problem ? null : 80,
  fromMemoryCount: problem ? null : 51,
  problem,
});

const codes = { siteNumber: '101', subjectCode: '101-004', visitCode: 'V3', timepointCode: 'PRE-DOSE', bronchodilator: 'pre' as const };

// A fictional replay: one effort loses FVC acceptability and the session's FVC grade drops.
const RESULT: ReplayResult = {
  id: 'replay-1',
  studyId: 'study-1',
  ranAt: '2026-05-01T10:00:00.000Z',
  ranBy: 'user-1',
  current: { ref: 'ats-ers-2019@1', title: 'ATS/ERS 2019 spirometry quality rules' },
  target: { ref: 'strict-set@1', title: 'Strict set' },
  counts: {
    sessionsReplayed: 12,
    efforts: 40,
    effortsChanged: 1,
    sessionsWithGradeChange: 1,
    sessionsWithEndpointChange: 0,
    storedVerdictsDiffering: 0,
    storedGradesDiffering: 0,
    sessionsWithProblems: 0,
  },
  verdictTransitions: [{ value: 'FVC', from: 'acceptable', to: 'not_acceptable', count: 1 }],
  effortChanges: [
    { sessionId: 's-1', ...codes, effortIndex: 2, effortLabel: 'effort-3.csv', fev1: { from: 'acceptable', to: 'acceptable' }, fvc: { from: 'acceptable', to: 'not_acceptable' } },
  ],
  sessionChanges: [
    {
      sessionId: 's-1',
      ...codes,
      fev1Grade: { from: 'A', to: 'A' },
      fvcGrade: { from: 'A', to: 'C' },
      fev1Endpoint: { from: true, to: true },
      fvcEndpoint: { from: true, to: true },
    },
  ],
  problems: [],
  elapsedMs: 1234,
};

describe('StudyReplayPage', () => {
  let fixture: ComponentFixture<StudyReplayPage>;
  let backend: HttpTestingController;

  beforeEach(async () => {
    TestBed.configureTestingModule({
      providers: [provideRouter([]), provideHttpClient(withInterceptors([errorInterceptor])), provideHttpClientTesting()],
    });
    backend = TestBed.inject(HttpTestingController);
    await loadSession(meWithRoles(['study-admin']));
    fixture = TestBed.createComponent(StudyReplayPage);
    TestBed.tick();
    backend
      .expectOne('/api/protocols')
      .flush([summary('ats-ers-2019', 'ATS/ERS 2019 spirometry quality rules'), summary('strict-set', 'Strict set'), summary('broken', '', 'broken.v1.json: not valid JSON')]);
    await fixture.whenStable();
  });

  afterEach(() => backend.verify());

  function text(): string {
    return ((fixture.nativeElement as HTMLElement).textContent ?? '').replace(/\s+/g, ' ');
  }

  async function runUnder(optionText: RegExp) {
    const select = await TestbedHarnessEnvironment.loader(fixture).getHarness(MatSelectHarness.with({ selector: '.rule-set-field mat-select' }));
    await select.open();
    const options = await select.getOptions();
    const labels = await Promise.all(options.map((option) => option.getText()));
    await select.clickOptions({ text: optionText });
    (fixture.nativeElement as HTMLElement).querySelector<HTMLButtonElement>('button[type="submit"]')!.click();
    await fixture.whenStable();
    return labels;
  }

  it('offers only valid rule sets, runs the replay, and shows counts, changes and the download link', async () => {
    const labels = await runUnder(/Strict set/);
    expect(labels).toEqual(['ATS/ERS 2019 spirometry quality rules (ats-ers-2019@1)', 'Strict set (strict-set@1)']);
    const request = backend.expectOne('/api/studies/study-1/replays');
    expect(request.request.method).toBe('POST');
    expect(request.request.body).toEqual({ ruleSet: 'strict-set@1' });
    request.flush(RESULT);
    await fixture.whenStable();

    const counts = Array.from((fixture.nativeElement as HTMLElement).querySelectorAll('.counts > div')).map(
      (entry) => `${entry.querySelector('dt')?.textContent?.trim()}: ${entry.querySelector('dd')?.textContent?.trim()}`,
    );
    expect(counts).toEqual(expect.arrayContaining(['Sessions checked again: 12', 'Efforts with another suggested verdict: 1', 'Sessions with another grade: 1']));
    expect(text()).toContain('101 · 101-004 · V3 · PRE-DOSE (pre)');
    expect(text()).toContain('Acceptable → Not acceptable');
    expect(text()).toContain('A → C');
    const link = (fixture.nativeElement as HTMLElement).querySelector<HTMLAnchorElement>('a[download]')!;
    expect(link.getAttribute('href')).toBe('/api/studies/study-1/replays/replay-1.csv');
  });

  it("shows the server's words when the rule set is unknown", async () => {
    await runUnder(/Strict set/);
    backend
      .expectOne('/api/studies/study-1/replays')
      .flush(
        { error: { code: 'rule-set-unknown', message: 'There is no rule set "strict-set@1". Known rule sets: ats-ers-2019@1.' } },
        { status: 404, statusText: 'Not Found' },
      );
    await fixture.whenStable();
    expect((fixture.nativeElement as HTMLElement).querySelector('[role="alert"]')?.textContent).toContain('Known rule sets: ats-ers-2019@1.');
  });
});
