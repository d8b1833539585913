import { afterEach, beforeEach, describe, expect, it, jest } from '@jest/globals';
import { provideHttpClient, withInterceptors } from '@angular/common/http';
import { HttpTestingController, provideHttpClientTesting, type TestRequest } from '@angular/common/http/testing';
import { TestBed, type ComponentFixture } from '@angular/core/testing';
import { MATERIAL_ANIMATIONS } from '@angular/material/core';
import { Router, provideRouter } from '@angular/router';

import type { ReadWorkspace, SaveRead } from '@shared/contracts/reading';
import type { SessionCurves } from '@shared/contracts/sessions';
import type { EffortMetrics } from '@shared/spirometry/model';
import { resolveProtocol } from '@shared/spirometry/protocol';
import { summarizeRead } from '@shared/spirometry/read-summary';
import ruleSet from '../../../../protocols/ats-ers-2019.v1.json';
import { loadSession, meWithRoles } from '../../../testing/session-testing';
import { errorInterceptor } from '../../core/http/error-interceptor';
import { gradeText } from '../read-labels';
import { ReadWorkspaceView } from './read-workspace';

// The curves are drawn through the loader; a stand-in keeps plotly (and a canvas) out of jsdom.
const react = jest.fn(async (element: HTMLElement) => Object.assign(element, { on: jest.fn() }));
jest.mock('../../ui/effort-curves/plotly-loader', () => ({
  loadPlotly: () => Promise.resolve({ react, purge: jest.fn(), relayout: jest.fn() }),
}));

const READ = '/api/studies/study-1/reads/read-1';
const PAGE_URL = '/reading/reads/study-1/read-1';

/** Metrics of a fictional effort; only the values the result uses vary. */
function metrics(fev1L: number, fvcL: number) {
  return { fev1L, fvcL, fev6L: fvcL - 0.02, pefLPerS: 8.1, fef2575LPerS: 3.2, fetS: 7.4, bevL: 0.05, timeZeroS: 0.51, hesitationTimeS: 0.3, timeToPefS: 0.09 };
}

// Three fictional clean efforts whose FEV1 agree within 50 mL: grade A as suggested.
const EFFORT_VALUES: readonly [number, number][] = [
  [3.2, 4.1],
  [3.15, 4.05],
  [3.1, 4.0],
];

const WORKSPACE: ReadWorkspace = {
  readId: 'read-1',
  blindCode: 'R-7Q2K',
  kind: 'first',
  status: 'in-progress',
  version: 2,
  dueAt: '2025-02-03T10:00:00.000Z',
  visitCode: 'V2',
  timepointCode: null,
  bronchodilator: 'pre',
  ageYears: 50,
  heightCm: 172,
  sex: 'female',
  protocolRuleSet: ruleSet,
  efforts: EFFORT_VALUES.map(([fev1L, fvcL], index) => ({
    index,
    label: `Effort ${index + 1}`,
    metrics: metrics(fev1L, fvcL),
    findings: [],
    suggestedFev1Verdict: 'acceptable',
    suggestedFvcVerdict: 'acceptable',
    verdictReasons: { fev1: [], fvc: [] },
  })),
  // As the engine suggested and the reader saved them at version 2.
  verdicts: EFFORT_VALUES.map((_, index) => ({ effortIndex: index, fev1Verdict: 'acceptable', fvcVerdict: 'acceptable', findings: [], comment: '' })),
  feedbackText: '',
  result: {
    fev1Grade: 'A',
    fvcGrade: 'A',
    reportedFev1L: 3.2,
    reportedFvcL: 4.1,
    fev1FvcRatio: 0.78,
    fev1EffortIndex: 0,
    fvcEffortIndex: 0,
    endpointEligible: { fev1: true, fvc: true, reasons: [] },
  },
  signature: null,
};

const CURVES: SessionCurves = {
  efforts: [0, 1, 2].map((index) => ({
    index,
    label: `Effort ${index + 1}`,
    timeS: [0, 1, 2],
    volumeL: [0, 3, 4],
    flowLPerS: [8, 2, 0],
    backExtrapolation: { timeS: [-0.05, 0.05], volumeL: [0, 0.3] },
  })),
};

/** The grade summarizeRead gives when the FEV1 verdicts are these. */
function expectedFev1Grade(fev1Verdicts: readonly ('acceptable' | 'usable' | 'not_acceptable')[]): string {
  const efforts = WORKSPACE.efforts.map((effort, position) => ({
    index: effort.index,
    metrics: effort.metrics as unknown as EffortMetrics,
    fev1Verdict: fev1Verdicts[position],
    fvcVerdict: 'acceptable' as const,
  }));
  return summarizeRead(efforts, resolveProtocol(ruleSet), WORKSPACE.ageYears).fev1.grade;
}

describe('ReadWorkspaceView', () => {
  let fixture: ComponentFixture<ReadWorkspaceView>;
  let backend: HttpTestingController;

  beforeEach(async () => {
    TestBed.configureTestingModule({
      providers: [
        provideRouter([{ path: '**', children: [] }]),
        provideHttpClient(withInterceptors([errorInterceptor])),
        provideHttpClientTesting(),
        { provide: MATERIAL_ANIMATIONS, useValue: { animationsDisabled: true } },
      ],
    });
    backend = TestBed.inject(HttpTestingController);
    await loadSession(meWithRoles(['over-reader']));
    await TestBed.inject(Router).navigateByUrl(PAGE_URL);
    react.mockClear();
  });

  afterEach(() => backend.verify());

  function create(signRequested = false): void {
    fixture = TestBed.createComponent(ReadWorkspaceView);
    fixture.componentRef.setInput('studyId', 'study-1');
    fixture.componentRef.setInput('readId', 'read-1');
    fixture.componentRef.setInput('homeLink', '/reading');
    fixture.componentRef.setInput('signRequested', signRequested);
  }

  /** Lets resources take their answers and the view catch up; `whenStable` would wait for open requests. */
  async function settle(): Promise<void> {
    for (let round = 0; round < 3; round++) {
      await new Promise((resolve) => setTimeout(resolve));
      TestBed.tick();
    }
  }

  async function open(workspace: ReadWorkspace = WORKSPACE): Promise<void> {
    TestBed.tick();
    backend.expectOne(READ).flush(workspace);
    backend.expectOne(`${READ}/curves`).flush(CURVES);
    backend.expectOne('/api/formats/finding-codes').flush([]);
    await settle();
    backend.expectOne(`${READ}/queries`).flush([]);
    await settle();
  }

  const page = () => fixture.nativeElement as HTMLElement;
  const text = (element: Element | null) => element?.textContent?.replace(/\s+/g, ' ').trim() ?? '';
  const fev1Grade = () => text(page().querySelector('[data-testid="live-fev1-grade"]'));
  const overlay = () => document.querySelector('.cdk-overlay-container') as HTMLElement;

  function press(key: string, code: string, shiftKey = false): void {
    document.dispatchEvent(new KeyboardEvent('keydown', { key, code, shiftKey, bubbles: true }));
  }

  it("recomputes the grade with the shared engine when a FEV1 verdict changes, and marks the override", async () => {
    create();
    await open();
    expect(fev1Grade()).toBe(gradeText('A'));

    page().querySelector<HTMLInputElement>('[data-testid="fev1-not_acceptable"] input')!.click();
    await settle();

    const expected = expectedFev1Grade(['not_acceptable', 'acceptable', 'acceptable']);
    expect(expected).not.toBe('A');
    expect(fev1Grade()).toBe(gradeText(expected as 'B'));
    expect(text(page().querySelector('[data-testid="fev1-overridden"]'))).toContain('the engine suggests acceptable');
    expect(text(page())).toContain('Unsaved changes.');
  });

  it('moves to the next effort with J and sets its FEV1 verdict with 3, saying so to screen readers', async () => {
    create();
    await open();

    press('j', 'KeyJ');
    press('3', 'Digit3');
    await settle();

    expect(fev1Grade()).toBe(gradeText(expectedFev1Grade(['acceptable', 'not_acceptable', 'acceptable']) as 'B'));
    expect(text(page().querySelector('[data-testid="announcement"]'))).toBe('Effort 2: FEV1 verdict set to not acceptable.');
  });

  it('on a stale save (409) shows what changed elsewhere and loads the saved version on request', async () => {
    create();
    await open();
    press('2', 'Digit2');
    await settle();

    page().querySelector<HTMLButtonElement>('[data-testid="save-read"]')!.click();
    const put: TestRequest = backend.expectOne({ method: 'PUT', url: READ });
    const body = put.request.body as SaveRead;
    expect(body.version).toBe(2);
    expect(body.verdicts.map((verdict) => verdict.fev1Verdict)).toEqual(['usable', 'acceptable', 'acceptable']);
    put.flush(
      {
        error: {
          code: 'stale-read',
          message: 'This read was saved elsewhere since you opened it.',
          details: { currentVersion: 3, changed: ['Effort 3: FVC verdict acceptable → usable'] },
        },
      },
      { status: 409, statusText: 'Conflict' },
    );
    await settle();

    expect(text(overlay().querySelector('[data-testid="stale-changes"]'))).toBe('Effort 3: FVC verdict acceptable → usable');
    expect(text(overlay())).toContain('now version 3');

    overlay().querySelector<HTMLButtonElement>('[data-testid="stale-reload"]')!.click();
    await settle();
    const saved = { ...WORKSPACE, version: 3, verdicts: WORKSPACE.efforts.map((effort) => ({ effortIndex: effort.index, fev1Verdict: 'acceptable' as const, fvcVerdict: effort.index === 2 ? ('usable' as const) : ('acceptable' as const), findings: [], comment: '' })) };
    backend.expectOne({ method: 'GET', url: READ }).flush(saved);
    await settle();

    expect(text(page())).toContain('Everything is saved (version 3).');
    expect(fev1Grade()).toBe(gradeText('A'));
  });

  it('when signing needs a fresh sign-in (401), explains it and links to re-authentication coming back with ?sign=1', async () => {
    create();
    await open();

    page().querySelector<HTMLButtonElement>('[data-testid="sign-read"]')!.click();
    await settle();
    expect(text(overlay().querySelector('[data-testid="signature-printed-name"]'))).toBe('Wren Halloway');
    expect(text(overlay())).toContain('I confirm this over-read as its author.');
    expect(text(overlay())).toContain('Authored');

    overlay().querySelector<HTMLButtonElement>('[data-testid="confirm-signature"]')!.click();
    await settle();
    const sign = backend.expectOne({ method: 'POST', url: `${READ}/sign` });
    expect(sign.request.body).toEqual({ version: 2, meaning: 'authored' });
    sign.flush(
      { error: { code: 'reauthentication-required', message: 'Your last sign-in is more than 5 minutes old.' } },
      { status: 401, statusText: 'Unauthorized' },
    );
    await settle();

    expect(text(overlay())).toContain('To sign, confirm your identity at the sign-in page.');
    const link = overlay().querySelector<HTMLAnchorElement>('[data-testid="reauthenticate-link"]');
    expect(link?.getAttribute('href')).toBe(`/auth/reauthenticate?returnTo=${encodeURIComponent(`${PAGE_URL}?sign=1`)}`);
  });

  it('saves the pre-filled suggestions of a fresh read before signing it, and signs the saved version', async () => {
    create();
    await open({ ...WORKSPACE, version: 1, verdicts: [] });
    expect(text(page())).toContain('Unsaved changes.');

    page().querySelector<HTMLButtonElement>('[data-testid="sign-read"]')!.click();
    await settle();
    overlay().querySelector<HTMLButtonElement>('[data-testid="confirm-signature"]')!.click();
    await settle();

    const put = backend.expectOne({ method: 'PUT', url: READ });
    expect((put.request.body as SaveRead).verdicts.map((verdict) => [verdict.fev1Verdict, verdict.fvcVerdict])).toEqual([
      ['acceptable', 'acceptable'],
      ['acceptable', 'acceptable'],
      ['acceptable', 'acceptable'],
    ]);
    put.flush({ ...WORKSPACE, version: 2 });
    await settle();
    const sign = backend.expectOne({ method: 'POST', url: `${READ}/sign` });
    expect(sign.request.body).toEqual({ version: 2, meaning: 'authored' });
    sign.flush({ ...WORKSPACE, status: 'signed', version: 3, signature: { printedName: 'Wren Halloway', meaning: 'authored', signedAt: '2025-02-03T09:12:30.000Z', valid: true } });
    await settle();
    expect(text(page())).toContain('This read is signed and can no longer change.');
  });

  it('back with ?sign=1, offers the signature at once and shows it with the read once signed', async () => {
    create(true);
    await open();

    overlay().querySelector<HTMLButtonElement>('[data-testid="confirm-signature"]')!.click();
    await settle();
    backend.expectOne({ method: 'POST', url: `${READ}/sign` }).flush({
      ...WORKSPACE,
      status: 'signed',
      version: 3,
      signature: { printedName: 'Wren Halloway', meaning: 'authored', signedAt: '2025-02-03T09:12:30.000Z', valid: true },
    });
    await settle();

    expect(text(page().querySelector('app-signature-manifestation'))).toContain(
      'Signed by Wren Halloway · meaning: Authored · 2025-02-03 09:12:30 UTC',
    );
    expect(text(page().querySelector('[data-testid="announcement"]'))).toBe(
      'Signed by Wren Halloway as author at 2025-02-03 09:12:30 UTC.',
    );
    expect(page().querySelector<HTMLButtonElement>('[data-testid="save-read"]')!.disabled).toBe(true);
    expect(TestBed.inject(Router).url).toBe(PAGE_URL);
  });
});
