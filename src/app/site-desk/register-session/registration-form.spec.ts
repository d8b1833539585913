import { describe, expect, it } from '@jest/globals';
import { FormControl, NonNullableFormBuilder } from '@angular/forms';
import { TestBed } from '@angular/core/testing';

import { registerSessionSchema } from '@shared/contracts/sessions';
import { siteTimeValidator } from '../site-time-validator';
import { buildRegistrationForm, registrationFieldError, toRegisterSession, type RegistrationValue } from './registration-form';

// Fictional subject; Europe/Oslo offsets from the IANA tz database (CET +01:00, CEST +02:00).
const FILLED: RegistrationValue = {
  subjectCode: 'TM-0001',
  visitCode: 'V2',
  timepointCode: 'T0',
  bronchodilator: 'post',
  testedAt: '2025-07-15T09:30',
  ageYears: 54,
  heightCm: 172.5,
  weightKg: null,
  sex: 'female',
  ethnicity: '',
  technicianCode: ' TECH-7 ',
  deviceManufacturer: '',
  deviceModel: '',
  deviceSerialNumber: '',
};

describe('toRegisterSession', () => {
  it("sends the site's wall-clock time with the site's offset, and a body the contract accepts", () => {
    const body = toRegisterSession(FILLED, 'Europe/Oslo');
    expect(body).toMatchObject({
      testedAt: '2025-07-15T09:30:00+02:00',
      bronchodilator: 'post',
      technicianCode: 'TECH-7',
      demographics: { ageYears: 54, heightCm: 172.5, weightKg: null, sex: 'female', ethnicity: null },
    });
    expect(body?.device).toBeUndefined();
    expect(registerSessionSchema.safeParse(body).success).toBe(true);
  });

  it('sends only the device fields given', () => {
    const body = toRegisterSession({ ...FILLED, deviceSerialNumber: 'SN-42 ' }, 'America/Toronto');
    expect(body?.device).toEqual({ manufacturer: undefined, model: undefined, serialNumber: 'SN-42' });
    expect(body?.testedAt).toBe('2025-07-15T09:30:00-04:00');
  });

  it.each([
    ['no sex', { sex: '' as const }],
    ['no age', { ageYears: null }],
    ['a time the clocks skipped', { testedAt: '2025-03-30T02:30' }],
  ])('gives nothing to send with %s', (_case, change) => {
    expect(toRegisterSession({ ...FILLED, ...change }, 'Europe/Oslo')).toBeNull();
  });
});

describe('siteTimeValidator', () => {
  const now = () => new Date('2025-07-15T12:00:00Z');
  const validate = (value: string, timeZone = 'Europe/Oslo') =>
    siteTimeValidator(() => timeZone, now)(new FormControl(value, { nonNullable: true }));

  it.each([
    ['a time earlier today at the site', '2025-07-15T09:30', null],
    // 14:04 in Oslo is 12:04 UTC: within the five minutes allowed for clocks that differ.
    ['a site clock a few minutes ahead', '2025-07-15T14:04', null],
    ['a time later today at the site', '2025-07-15T16:00', { futureTime: true }],
    ['a time the clocks skipped', '2025-03-30T02:30', { skippedTime: { timeZone: 'Europe/Oslo' } }],
  ])('judges %s', (_case, value, errors) => {
    expect(validate(value)).toEqual(errors);
  });
});

describe('registrationFieldError', () => {
  it('names the field and the plausible range with its unit (DEMOGRAPHIC_LIMITS)', () => {
    const form = TestBed.runInInjectionContext(() => buildRegistrationForm(TestBed.inject(NonNullableFormBuilder), () => 'Europe/Oslo'));
    form.controls.heightCm.setValue(68);
    expect(registrationFieldError('heightCm', form.controls.heightCm.errors)).toBe(
      '68 cm is outside the plausible height of 80-230 cm. Check the unit.',
    );
    expect(registrationFieldError('subjectCode', form.controls.subjectCode.errors)).toBe('Choose the subject, or enrol a new one.');
    form.controls.testedAt.setValue('2025-03-30T02:30');
    expect(registrationFieldError('testedAt', form.controls.testedAt.errors)).toContain('did not exist at the site');
  });
});
