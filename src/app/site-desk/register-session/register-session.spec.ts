import { afterEach, beforeEach, describe, expect, it } from '@jest/globals';
import { provideHttpClient, withInterceptors } from '@angular/common/http';
import { HttpTestingController, provideHttpClientTesting } from '@angular/common/http/testing';
import { TestBed, type ComponentFixture } from '@angular/core/testing';
import { provideRouter } from '@angular/router';

import type { Schedule, SessionDetail, Subject } from '@shared/contracts/sessions';
import type { Site } from '@shared/contracts/studies';
import { loadSession, meWithRoles } from '../../../testing/session-testing';
import { csrfInterceptor } from '../../core/auth/csrf-interceptor';
import { errorInterceptor } from '../../core/http/error-interceptor';
import { SiteDeskSelection } from '../site-desk-selection';
import { RegisterSessionPage } from './register-session';

const BASE = '/api/studies/study-1';

// Fictional site, schedule and subject. Europe/Oslo is CET, UTC+01:00, in January (IANA tz database).
const SITE: Site = { id: 'site-101', studyId: 'study-1', number: '101', name: 'Harbour Clinic', countryCode: 'NO', timeZone: 'Europe/Oslo' };
const SCHEDULE: Schedule = {
  visits: [{ code: 'V1', name: 'Screening', dayOffset: -14, windowBeforeDays: 7, windowAfterDays: 0 }],
  timepoints: [{ code: 'T0', name: 'Before dosing' }],
};
const SUBJECT: Subject = { id: 'subject-1', siteId: 'site-101', code: 'TM-0001', enrolledAt: '2025-01-02T09:00:00.000Z' };

describe('RegisterSessionPage', () => {
  let fixture: ComponentFixture<RegisterSessionPage>;
  let backend: HttpTestingController;

  beforeEach(async () => {
    TestBed.configureTestingModule({
      providers: [
        provideRouter([]),
        provideHttpClient(withInterceptors([csrfInterceptor, errorInterceptor])),
        provideHttpClientTesting(),
        SiteDeskSelection,
      ],
    });
    backend = TestBed.inject(HttpTestingController);
    await loadSession(meWithRoles(['site-coordinator']));
    fixture = TestBed.createComponent(RegisterSessionPage);
    TestBed.tick();
    backend.expectOne(`${BASE}/sites`).flush([SITE]);
    backend.expectOne(`${BASE}/schedule`).flush(SCHEDULE);
    await new Promise((resolve) => setTimeout(resolve));
    TestBed.tick();
    backend.expectOne(`${BASE}/sites/site-101/subjects`).flush([SUBJECT]);
    await fixture.whenStable();
  });

  afterEach(() => backend.verify());

  function element(): HTMLElement {
    return fixture.nativeElement as HTMLElement;
  }

  function type(controlName: string, value: string): void {
    const input = element().querySelector<HTMLInputElement>(`input[formcontrolname="${controlName}"]`)!;
    input.value = value;
    input.dispatchEvent(new Event('input'));
  }

  function choose(controlName: string, optionText: string): void {
    element().querySelector<HTMLElement>(`mat-select[formcontrolname="${controlName}"] .mat-mdc-select-trigger`)!.click();
    TestBed.tick();
    Array.from(document.querySelectorAll<HTMLElement>('mat-option'))
      .find((option) => option.textContent?.trim() === optionText)!
      .click();
    TestBed.tick();
  }

  function pickRadio(label: string): void {
    Array.from(element().querySelectorAll<HTMLElement>('mat-radio-button'))
      .find((radio) => radio.textContent?.trim() === label)!
      .querySelector('input')!
      .click();
  }

  function submit(): void {
    element().querySelector<HTMLButtonElement>('button[type="submit"]')!.click();
    TestBed.tick();
  }

  it('says what each missing field needs and sends nothing', async () => {
    type('testedAt', '');
    submit();
    await fixture.whenStable();
    const errors = Array.from(element().querySelectorAll('mat-error, .field-error')).map((error) => error.textContent?.trim());
    expect(errors).toEqual(
      expect.arrayContaining([
        'Choose the subject, or enrol a new one.',
        'Choose the visit.',
        'Say whether the test was before or after the bronchodilator.',
        'Give the date and time of the test.',
        'Give the age.',
        'Give the sex.',
      ]),
    );
    expect(element().querySelector('[role="alert"]')?.textContent).toContain('Some fields need attention');
  });

  it('registers with the site-clock time and its offset, then asks for the file', async () => {
    choose('subjectCode', 'TM-0001');
    choose('visitCode', 'Screening (V1)');
    choose('timepointCode', 'Before dosing (T0)');
    pickRadio('Before bronchodilator');
    type('testedAt', '2025-01-15T09:30');
    type('ageYears', '54');
    type('heightCm', '172');
    pickRadio('Female');
    type('technicianCode', 'TECH-7');
    submit();

    const request = backend.expectOne(`${BASE}/sites/site-101/sessions`);
    expect(request.request.method).toBe('POST');
    expect(request.request.headers.get('x-csrf-token')).toBe('csrf-test-token');
    expect(request.request.body).toEqual({
      subjectCode: 'TM-0001',
      visitCode: 'V1',
      timepointCode: 'T0',
      bronchodilator: 'pre',
      testedAt: '2025-01-15T09:30:00+01:00',
      demographics: { ageYears: 54, heightCm: 172, weightKg: null, sex: 'female', ethnicity: null },
      technicianCode: 'TECH-7',
    });
    request.flush(registered(), { status: 201, statusText: 'Created' });
    await fixture.whenStable();

    expect(element().textContent).toContain('Step 2 of 2: the session file');
    expect(element().querySelector('app-session-file-upload input[type="file"]')).not.toBeNull();
  });
});

function registered(): SessionDetail {
  return {
    id: 'session-9',
    studyId: 'study-1',
    siteId: 'site-101',
    siteNumber: '101',
    subjectCode: 'TM-0001',
    visitCode: 'V1',
    timepointCode: 'T0',
    bronchodilator: 'pre',
    testedAt: '2025-01-15T08:30:00.000Z',
    timeZone: 'Europe/Oslo',
    status: 'awaiting-file',
    fev1Grade: null,
    fvcGrade: null,
    effortCount: 0,
    registeredAt: '2025-01-15T08:35:00.000Z',
    updatedAt: '2025-01-15T08:35:00.000Z',
    locked: false,
    demographics: { ageYears: 54, heightCm: 172, weightKg: null, sex: 'female', ethnicity: null },
    technicianCode: 'TECH-7',
    device: { manufacturer: null, model: null, serialNumber: null },
    registeredBy: 'user-1',
    rejectionReasons: [],
    check: null,
    efforts: [],
    uploads: [],
    lock: null,
  };
}
