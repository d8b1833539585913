import { afterEach, beforeEach, describe, expect, it } from '@jest/globals';
import { provideHttpClient, withInterceptors } from '@angular/common/http';
import { HttpTestingController, provideHttpClientTesting } from '@angular/common/http/testing';
import { TestBed, type ComponentFixture } from '@angular/core/testing';
import { provideRouter } from '@angular/router';

import type { CalibrationCheckRecord } from '@shared/contracts/sessions';
import type { Site } from '@shared/contracts/studies';
import { loadSession, meWithRoles } from '../../../testing/session-testing';
import { errorInterceptor } from '../../core/http/error-interceptor';
import { SiteDeskSelection } from '../site-desk-selection';
import { CalibrationLogPage } from './calibration-log';

const CHECKS_URL = '/api/studies/study-1/sites/site-101/calibration-checks';

// Fictional site in America/Toronto: EST, UTC-05:00, in January (IANA tz database).
const SITE: Site = { id: 'site-101', studyId: 'study-1', number: '101', name: 'Lakeside Clinic', countryCode: 'CA', timeZone: 'America/Toronto' };

function check(overrides: Partial<CalibrationCheckRecord>): CalibrationCheckRecord {
  return {
    id: 'check-1',
    siteId: 'site-101',
    deviceSerialNumber: 'SN-42',
    syringeVolumeL: 3,
    measuredVolumeL: 3.06,
    checkedAt: '2025-01-15T13:00:00.000Z',
    errorPercent: 2,
    withinTolerance: true,
    toleranceText: 'Syringe 3.00 L read 3.060 L (+2.0 %); accepted ±3 %: passed.',
    source: 'entered',
    enteredBy: 'user-1',
    enteredAt: '2025-01-15T13:05:00.000Z',
    ...overrides,
  };
}

describe('CalibrationLogPage', () => {
  let fixture: ComponentFixture<CalibrationLogPage>;
  let backend: HttpTestingController;

  beforeEach(async () => {
    TestBed.configureTestingModule({
      providers: [provideRouter([]), provideHttpClient(withInterceptors([errorInterceptor])), provideHttpClientTesting(), SiteDeskSelection],
    });
    backend = TestBed.inject(HttpTestingController);
    await loadSession(meWithRoles(['site-coordinator']));
    fixture = TestBed.createComponent(CalibrationLogPage);
    TestBed.tick();
    backend.expectOne('/api/studies/study-1/sites').flush([SITE]);
    await new Promise((resolve) => setTimeout(resolve));
    TestBed.tick();
    backend
      .expectOne(CHECKS_URL)
      .flush([check({}), check({ id: 'check-2', measuredVolumeL: 2.85, errorPercent: -5, withinTolerance: false, source: 'upload' })]);
    await fixture.whenStable();
  });

  afterEach(() => backend.verify());

  function element(): HTMLElement {
    return fixture.nativeElement as HTMLElement;
  }

  it('lists each check with the tolerance verdict in words and the time on the site clock', () => {
    const rows = Array.from(element().querySelectorAll('tr.mat-mdc-row')).map((row) => row.textContent?.replace(/\s+/g, ' ') ?? '');
    expect(rows[0]).toContain('+2.0');
    expect(rows[0]).toContain('Yes');
    expect(rows[0]).toMatch(/08:00/);
    expect(rows[1]).toContain('-5.0');
    expect(rows[1]).toContain('No');
    expect(rows[1]).toContain('From an uploaded file');
  });

  it('adds a check with the 3-L syringe by default and the site-clock time with its offset', async () => {
    const field = (name: string) => element().querySelector<HTMLInputElement>(`input[formcontrolname="${name}"]`)!;
    expect(field('syringeVolumeL').value).toBe('3');
    for (const [name, value] of [
      ['deviceSerialNumber', 'SN-42'],
      ['measuredVolumeL', '3.02'],
      ['checkedAt', '2025-01-15T08:00'],
    ]) {
      field(name).value = value;
      field(name).dispatchEvent(new Event('input'));
    }
    element().querySelector<HTMLButtonElement>('button[type="submit"]')!.click();

    const request = backend.expectOne((candidate) => candidate.method === 'POST' && candidate.url === CHECKS_URL);
    expect(request.request.body).toEqual({
      deviceSerialNumber: 'SN-42',
      syringeVolumeL: 3,
      measuredVolumeL: 3.02,
      checkedAt: '2025-01-15T08:00:00-05:00',
    });
    request.flush(check({ measuredVolumeL: 3.02 }), { status: 201, statusText: 'Created' });
    TestBed.tick();
    backend.expectOne((candidate) => candidate.method === 'GET' && candidate.url === CHECKS_URL).flush([check({})]);
    await fixture.whenStable();
    expect(element().querySelector('p.saved[aria-live]')?.textContent).toContain('Check saved. Syringe 3.00 L');
  });
});
