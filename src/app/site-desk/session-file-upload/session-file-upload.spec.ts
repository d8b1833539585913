import { afterEach, beforeEach, describe, expect, it } from '@jest/globals';
import { HttpEventType, provideHttpClient, withInterceptors } from '@angular/common/http';
import { HttpTestingController, provideHttpClientTesting, type TestRequest } from '@angular/common/http/testing';
import { TestBed, type ComponentFixture } from '@angular/core/testing';
import { provideRouter } from '@angular/router';

import type { SessionDetail, UploadResult } from '@shared/contracts/sessions';
import { errorInterceptor } from '../../core/http/error-interceptor';
import type { FileRejection } from '../site-desk-api';
import { SessionFileUpload } from './session-file-upload';

const UPLOAD_URL = '/api/studies/study-1/sessions/session-1/uploads';

// A fictional session after a checked upload of one effort.
const SESSION: SessionDetail = {
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
  fev1Grade: 'U',
  fvcGrade: 'U',
  effortCount: 1,
  registeredAt: '2025-01-15T08:00:00.000Z',
  updatedAt: '2025-01-15T08:40:00.000Z',
  locked: false,
  demographics: { ageYears: 54, heightCm: 172, sex: 'female' },
  technicianCode: 'TECH-7',
  device: { manufacturer: null, model: null, serialNumber: null },
  registeredBy: 'user-1',
  rejectionReasons: [],
  check: null,
  efforts: [],
  uploads: [],
  lock: null,
};

const UPLOAD: UploadResult['upload'] = {
  id: 'upload-1',
  sessionId: 'session-1',
  originalName: 'efforts.zip',
  sizeBytes: 2048,
  sha256: 'a'.repeat(64),
  detectedFormat: 'effort-zip',
  uploadedBy: 'user-1',
  receivedAt: '2025-01-15T08:40:00.000Z',
  outcome: 'checked',
  errors: [],
  processedAt: '2025-01-15T08:40:01.000Z',
};

describe('SessionFileUpload', () => {
  let fixture: ComponentFixture<SessionFileUpload>;
  let backend: HttpTestingController;
  let checked: UploadResult[];
  let rejected: FileRejection[];

  beforeEach(async () => {
    TestBed.configureTestingModule({
      providers: [provideRouter([]), provideHttpClient(withInterceptors([errorInterceptor])), provideHttpClientTesting()],
    });
    backend = TestBed.inject(HttpTestingController);
    fixture = TestBed.createComponent(SessionFileUpload);
    fixture.componentRef.setInput('studyId', 'study-1');
    fixture.componentRef.setInput('sessionId', 'session-1');
    fixture.componentRef.setInput('showSessionLink', true);
    checked = [];
    rejected = [];
    fixture.componentInstance.checked.subscribe((result) => checked.push(result));
    fixture.componentInstance.rejected.subscribe((rejection) => rejected.push(rejection));
    await fixture.whenStable();
  });

  afterEach(() => backend.verify());

  function element(): HTMLElement {
    return fixture.nativeElement as HTMLElement;
  }

  function liveRegionText(): string {
    return element().querySelector('[aria-live]')?.textContent?.replace(/\s+/g, ' ').trim() ?? '';
  }

  async function chooseAndUpload(): Promise<TestRequest> {
    const input = element().querySelector<HTMLInputElement>('input[type="file"]')!;
    const file = new File(['time,volume\n0,0\n'], 'efforts.zip', { type: 'application/zip' });
    Object.defineProperty(input, 'files', { value: { item: () => file, length: 1 } });
    input.dispatchEvent(new Event('change'));
    await fixture.whenStable();
    element().querySelector<HTMLButtonElement>('button')!.click();
    const request = backend.expectOne(UPLOAD_URL);
    expect(request.request.method).toBe('POST');
    expect((request.request.body as FormData).get('file')).toBeInstanceOf(File);
    expect(request.request.reportProgress).toBe(true);
    return request;
  }

  it('offers one file of the accepted kinds and says how to send several efforts', () => {
    expect(element().querySelector('input[type="file"]')?.getAttribute('accept')).toBe('.csv,.zip,.json');
    expect(element().textContent).toContain('put their CSV files into one ZIP');
  });

  it('shows upload progress, then reports the checked session', async () => {
    const request = await chooseAndUpload();
    request.event({ type: HttpEventType.UploadProgress, loaded: 512, total: 2048 });
    await fixture.whenStable();
    expect(element().querySelector('mat-progress-bar')?.getAttribute('aria-valuenow')).toBe('25');
    expect(liveRegionText()).toBe('Uploading efforts.zip…');

    request.flush({ upload: UPLOAD, session: { ...SESSION, efforts: [] } }, { status: 201, statusText: 'Created' });
    await fixture.whenStable();
    expect(checked).toHaveLength(1);
    expect(liveRegionText()).toBe('efforts.zip was read and checked: 0 efforts found.');
  });

  it('lists every reason of a 422 rejection and links to the session that keeps the file', async () => {
    const request = await chooseAndUpload();
    const reasons = ['Row 14, column "volume": "n/a" is not a number.', 'The file holds no complete effort.'];
    request.flush(
      {
        error: {
          code: 'file-rejected',
          message: 'The file was stored but could not be used.',
          details: { uploadId: 'upload-1', sessionId: 'session-1', reasons },
        },
      },
      { status: 422, statusText: 'Unprocessable Entity' },
    );
    await fixture.whenStable();

    expect(rejected).toEqual([{ uploadId: 'upload-1', sessionId: 'session-1', reasons }]);
    expect(Array.from(element().querySelectorAll('.reasons li')).map((item) => item.textContent?.trim())).toEqual(reasons);
    expect(element().querySelector('a')?.getAttribute('href')).toBe('/site-desk/sessions/study-1/session-1');
  });

  it.each([
    [409, 'duplicate-file', 'This exact file was already uploaded for session TM-0001 V1.'],
    [413, 'file-too-large', 'The file is larger than the 20 MB accepted; nothing was stored.'],
  ])("shows the server's words for a %i %s", async (status, code, message) => {
    const request = await chooseAndUpload();
    request.flush({ error: { code, message } }, { status, statusText: 'Refused' });
    await fixture.whenStable();
    expect(liveRegionText()).toBe(`efforts.zip was not uploaded. ${message}`);
    expect(checked).toHaveLength(0);
    expect(rejected).toHaveLength(0);
  });
});
