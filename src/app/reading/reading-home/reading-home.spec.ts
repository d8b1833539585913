import { afterEach, beforeEach, describe, expect, it } from '@jest/globals';
import { provideHttpClient, withInterceptors } from '@angular/common/http';
import { HttpTestingController, provideHttpClientTesting } from '@angular/common/http/testing';
import { TestBed, type ComponentFixture } from '@angular/core/testing';
import { Router, provideRouter } from '@angular/router';

import type { QueuePage, ReadWorkspace } from '@shared/contracts/reading';
import { loadSession, meWithRoles } from '../../../testing/session-testing';
import { errorInterceptor } from '../../core/http/error-interceptor';
import { ReadingHome } from './reading-home';

const STUDY = '/api/studies/study-1';

// Two fictional queue items: what the blinding shows of them, and nothing else.
const QUEUE: QueuePage = {
  items: [
    { queueToken: 'token-a', kind: 'first', visitCode: 'V2', timepointCode: null, bronchodilator: 'post', effortCount: 4, dueAt: '2025-02-01T08:00:00.000Z', overdue: true },
    { queueToken: 'token-b', kind: 'second', visitCode: null, timepointCode: null, bronchodilator: null, effortCount: 3, dueAt: '2025-02-04T08:00:00.000Z', overdue: false },
  ],
  total: 2,
  turnaroundHours: 48,
};

// The read the claim creates; the home page only needs its id.
const CLAIMED: ReadWorkspace = {
  readId: 'read-10',
  blindCode: 'R-10AA',
  kind: 'first',
  status: 'in-progress',
  version: 1,
  dueAt: QUEUE.items[0].dueAt,
  visitCode: 'V2',
  timepointCode: null,
  bronchodilator: 'post',
  ageYears: 50,
  heightCm: 170,
  sex: 'male',
  protocolRuleSet: {},
  efforts: [],
  verdicts: [],
  feedbackText: '',
  result: {
    fev1Grade: 'F',
    fvcGrade: 'F',
    reportedFev1L: null,
    reportedFvcL: null,
    fev1FvcRatio: null,
    fev1EffortIndex: null,
    fvcEffortIndex: null,
    endpointEligible: { fev1: false, fvc: false, reasons: [] },
  },
  signature: null,
};

describe('ReadingHome', () => {
  let fixture: ComponentFixture<ReadingHome>;
  let backend: HttpTestingController;

  beforeEach(async () => {
    TestBed.configureTestingModule({
      providers: [provideRouter([{ path: '**', children: [] }]), provideHttpClient(withInterceptors([errorInterceptor])), provideHttpClientTesting()],
    });
    backend = TestBed.inject(HttpTestingController);
    await loadSession(meWithRoles(['over-reader']));
    fixture = TestBed.createComponent(ReadingHome);
    TestBed.tick();
    backend.expectOne(`${STUDY}/reading/queue`).flush(QUEUE);
    backend.expectOne(`${STUDY}/reads`).flush([
      { readId: 'read-9', blindCode: 'R-9ZZZ', kind: 'first', status: 'in-progress', dueAt: '2025-02-02T08:00:00.000Z', signedAt: null },
    ]);
    await settle();
  });

  afterEach(() => backend.verify());

  async function settle(): Promise<void> {
    for (let round = 0; round < 3; round++) {
      await new Promise((resolve) => setTimeout(resolve));
      TestBed.tick();
    }
  }

  const text = () => (fixture.nativeElement as HTMLElement).textContent?.replace(/\s+/g, ' ') ?? '';

  it('lists the queue with blind fields only, the overdue one said in words, and the reads in progress', () => {
    // Cell texts without the icon ligatures, which only decorate the words.
    const cellText = (cell: Element) => {
      const copy = cell.cloneNode(true) as Element;
      copy.querySelectorAll('mat-icon').forEach((icon) => icon.remove());
      return copy.textContent?.replace(/\s+/g, ' ').trim();
    };
    const rows = Array.from((fixture.nativeElement as HTMLElement).querySelectorAll('app-queue-table tbody tr')).map((row) =>
      Array.from(row.querySelectorAll('td')).map(cellText),
    );
    expect(rows).toEqual([
      ['First read', 'Visit V2 · after bronchodilator', '4', '2025-02-01 08:00 UTC Overdue', 'Claim'],
      ['Second read', 'Not shown (blinded by the study)', '3', '2025-02-04 08:00 UTC', 'Claim'],
    ]);
    expect(text()).toContain('Read R-9ZZZ');
    expect((fixture.nativeElement as HTMLElement).querySelector('[data-testid="area-home"]')).not.toBeNull();
  });

  it('claims the next item with its token and opens the new read', async () => {
    const claimNext = Array.from((fixture.nativeElement as HTMLElement).querySelectorAll('button')).find((button) => button.textContent?.includes('Claim next'))!;
    claimNext.click();
    const claim = backend.expectOne({ method: 'POST', url: `${STUDY}/reading/claims` });
    expect(claim.request.body).toEqual({ queueToken: 'token-a' });
    claim.flush(CLAIMED, { status: 201, statusText: 'Created' });
    await settle();
    expect(TestBed.inject(Router).url).toBe('/reading/reads/study-1/read-10');
  });

  it('says so when another reader claimed the item first (409), and shows the queue again', async () => {
    const claimButtons = (fixture.nativeElement as HTMLElement).querySelectorAll<HTMLButtonElement>('app-queue-table button');
    claimButtons[1].click();
    backend
      .expectOne({ method: 'POST', url: `${STUDY}/reading/claims` })
      .flush({ error: { code: 'already-claimed', message: 'Another reader claimed this session a moment ago.' } }, { status: 409, statusText: 'Conflict' });
    await settle();
    expect(text()).toContain('Another reader claimed this session a moment ago.');
    backend.expectOne(`${STUDY}/reading/queue`).flush({ ...QUEUE, items: [QUEUE.items[0]], total: 1 });
    await settle();
    expect((fixture.nativeElement as HTMLElement).querySelectorAll('app-queue-table tbody tr')).toHaveLength(1);
  });
});
