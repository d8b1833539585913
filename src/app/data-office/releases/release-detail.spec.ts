import { afterEach, beforeEach, describe, expect, it } from '@jest/globals';
import { provideHttpClient, withInterceptors } from '@angular/common/http';
import { HttpTestingController, provideHttpClientTesting, type TestRequest } from '@angular/common/http/testing';
import { TestBed, type ComponentFixture } from '@angular/core/testing';
import { MATERIAL_ANIMATIONS } from '@angular/material/core';
import { provideRouter } from '@angular/router';

import type { ReleaseDetail, ReleaseProgress } from '@shared/contracts/releases';
import type { Site } from '@shared/contracts/studies';
import { errorInterceptor } from '../../core/http/error-interceptor';
import { CAUTION_TEXT } from '../../ui/caution-note/caution-note';
import { ReleaseDetailPage } from './release-detail';
import { RELEASE_POLL_INTERVAL_MS } from './release-progress';

const RELEASE_ID = '3f1c2d4e-5a6b-4c7d-8e9f-0a1b2c3d4e5f';
const RELEASE_URL = `/api/studies/study-1/releases/${RELEASE_ID}`;
const SITES: Site[] = [{ id: 'site-101', studyId: 'study-1', number: '101', name: 'Harbour Lung Clinic', countryCode: 'NO', timeZone: 'Europe/Oslo' }];

// A fictional complete release of two files.
const FILES = [
  { name: 're.csv', contentType: 'text/csv; charset=utf-8', sizeBytes: 21_232, sha256: 'e'.repeat(64) },
  { name: 're.xpt', contentType: 'application/x-sas-xport', sizeBytes: 29_920, sha256: 'f'.repeat(64) },
];
const COMPLETE: ReleaseDetail = {
  release: {
    releaseId: RELEASE_ID,
    status: 'complete',
    requestedAt: '2025-03-01T10:00:01.000Z',
    requestedBy: 'Wren Halloway',
    signature: { signatureId: 'signature-1', printedName: 'Wren Halloway', meaning: 'released', signedAt: '2025-03-01T10:00:00.500Z' },
    reason: 'Interim analysis',
    scope: { siteIds: ['site-101'], visitCodes: null },
    dataCutAt: '2025-03-01T10:00:00.000Z',
    sessionCount: 3,
    completedAt: '2025-03-01T10:00:04.000Z',
    manifestSha256: '1'.repeat(64),
    files: FILES.map(({ name, sizeBytes, sha256 }) => ({ name, sizeBytes, sha256 })),
    error: null,
  },
  manifest: {
    format: 'tidemark-release-manifest/1',
    order: {
      releaseId: RELEASE_ID,
      studyId: 'study-1',
      studyCode: 'TM-DEMO-1',
      scope: { siteIds: ['site-101'], visitCodes: null },
      reason: 'Interim analysis',
      dataCutAt: '2025-03-01T10:00:00.000Z',
      dataFingerprint: 'd'.repeat(64),
      sessionCount: 3,
      requestedBy: { userId: 'user-1', printedName: 'Wren Halloway' },
    },
    signature: { signatureId: 'signature-1', printedName: 'Wren Halloway', meaning: 'released', signedAt: '2025-03-01T10:00:00.600Z' },
    study: { code: 'TM-DEMO-1', title: 'A fictional study', sponsor: 'A fictional sponsor' },
    dataAsOf: '2025-02-28T12:00:00.000Z',
    completedAt: '2025-03-01T10:00:04.000Z',
    counts: { sessions: 3, efforts: 9, reRecords: 96 },
    files: FILES,
    caution: 'Over-read results support, and do not replace, review by qualified staff.',
  },
  verification: {
    ok: true,
    manifest: 'intact',
    signature: 'valid',
    files: FILES.map((file) => ({
      name: file.name,
      status: 'intact' as const,
      expectedSha256: file.sha256,
      actualSha256: file.sha256,
      expectedSizeBytes: file.sizeBytes,
      actualSizeBytes: file.sizeBytes,
    })),
    problems: [],
    checkedAt: '2025-03-02T08:00:00.000Z',
  },
};
const TAMPERED: ReleaseDetail = {
  ...COMPLETE,
  verification: {
    ...COMPLETE.verification!,
    ok: false,
    signature: 'invalid',
    files: [{ ...COMPLETE.verification!.files[0], status: 'tampered', actualSha256: '0'.repeat(64) }, COMPLETE.verification!.files[1]],
    problems: ['File re.csv was changed after the release.', 'The release order in the manifest is not what was signed.'],
  },
};

describe('ReleaseDetailPage', () => {
  let fixture: ComponentFixture<ReleaseDetailPage>;
  let backend: HttpTestingController;

  beforeEach(() => {
    TestBed.configureTestingModule({
      providers: [
        provideHttpClient(withInterceptors([errorInterceptor])),
        provideHttpClientTesting(),
        provideRouter([{ path: '**', children: [] }]),
        { provide: MATERIAL_ANIMATIONS, useValue: { animationsDisabled: true } },
        { provide: RELEASE_POLL_INTERVAL_MS, useValue: 10 },
      ],
    });
    backend = TestBed.inject(HttpTestingController);
  });

  afterEach(() => backend.verify());

  /** Opens the page and answers the release read with `detail` (or a 404), and the sites. */
  async function open(detail: ReleaseDetail | null): Promise<void> {
    fixture = TestBed.createComponent(ReleaseDetailPage);
    fixture.componentRef.setInput('studyId', 'study-1');
    fixture.componentRef.setInput('releaseId', RELEASE_ID);
    fixture.detectChanges();
    TestBed.tick();
    answerRelease(detail);
    backend.expectOne('/api/studies/study-1/sites').flush(SITES);
    await fixture.whenStable();
  }

  function answerRelease(detail: ReleaseDetail | null): void {
    const request = backend.expectOne(RELEASE_URL);
    if (detail) request.flush(detail);
    else request.flush({ error: { code: 'not-found', message: `This study has no release ${RELEASE_ID}.` } }, { status: 404, statusText: 'Not Found' });
  }

  const element = () => fixture.nativeElement as HTMLElement;
  const text = () => element().textContent?.replace(/\s+/g, ' ') ?? '';
  const row = (name: string) => element().querySelector<HTMLElement>(`[data-testid="file-row"][data-file="${name}"]`)!;

  it('shows the signature (printed name, meaning, UTC time), the verification, each file with size, SHA-256 and download, and the caution', async () => {
    await open(COMPLETE);
    expect(text()).toContain('Signed: Wren Halloway · Released · 2025-03-01 10:00:00 UTC');
    expect(text()).toContain('valid: the release order is unchanged since signing');
    expect(text()).toContain('Verified 2025-03-02 08:00:00 UTC');
    expect(text()).toContain('Site 101');
    expect(text()).toContain('3 · 9 efforts · 96 SDTM RE records');
    expect(row('re.csv').textContent).toContain('21,232 bytes (20.7 KiB)');
    expect(row('re.csv').querySelector('[data-testid="file-sha256"]')!.textContent).toBe('e'.repeat(64));
    expect(row('re.xpt').querySelector('[data-testid="file-download"]')!.getAttribute('href')).toBe(`${RELEASE_URL}/files/re.xpt`);
    expect(element().querySelector('[data-testid="manifest-download"]')!.getAttribute('href')).toBe(`${RELEASE_URL}/files/manifest.json`);
    expect(element().querySelector('[role="note"][aria-label="Caution"]')!.textContent).toContain(CAUTION_TEXT);
  });

  it('names what was changed after the release, and offers no download of a changed file', async () => {
    await open(TAMPERED);
    const alert = element().querySelector('[role="alert"][data-testid="release-verification"]')!.textContent!;
    expect(alert).toContain('File re.csv was changed after the release.');
    expect(alert).toContain('The release order in the manifest is not what was signed.');
    expect(text()).toContain('not valid: the release order in the manifest is not what was signed');
    expect(row('re.csv').textContent).toContain('Changed after the release');
    expect(row('re.csv').querySelector('[data-testid="file-download"]')).toBeNull();
    expect(row('re.xpt').querySelector('[data-testid="file-download"]')).not.toBeNull();
  });

  it('offers no download at all when the manifest is not the one the audit trail recorded', async () => {
    await open({ ...TAMPERED, verification: { ...TAMPERED.verification!, manifest: 'forged', files: COMPLETE.verification!.files } });
    expect(element().querySelectorAll('[data-testid="file-download"]')).toHaveLength(0);
    expect(element().querySelector('[data-testid="manifest-download"]')).toBeNull();
  });

  it('follows a release still being built and shows it when it is ready', async () => {
    const running: ReleaseDetail = {
      release: { ...COMPLETE.release, status: 'running', completedAt: null, manifestSha256: null, files: [] },
      manifest: null,
      verification: null,
    };
    await open(running);
    let poll: TestRequest | undefined;
    for (let attempt = 0; attempt < 200 && !poll; attempt++) {
      await new Promise((resolve) => setTimeout(resolve, 5));
      [poll] = backend.match(`${RELEASE_URL}/progress`);
    }
    const done: ReleaseProgress = {
      releaseId: RELEASE_ID,
      status: 'complete',
      phase: 'Done',
      percent: 100,
      startedAt: '2025-03-01T10:00:01.000Z',
      finishedAt: '2025-03-01T10:00:04.000Z',
      elapsedMs: 3000,
      sessionCount: 3,
      error: null,
    };
    poll!.flush(done);
    TestBed.tick();
    answerRelease(COMPLETE);
    await fixture.whenStable();
    expect(element().querySelectorAll('[data-testid="file-row"]')).toHaveLength(2);
    expect(text()).toContain('Ready');
  });

  it('says so in words when the release does not exist', async () => {
    await open(null);
    expect(text()).toContain(`The release could not be read: This study has no release ${RELEASE_ID}.`);
  });
});
