import type { NonNullableFormBuilder, ValidationErrors } from '@angular/forms';
import { Validators } from '@angular/forms';

import { DEMOGRAPHIC_LIMITS, type RegisterSession } from '@shared/contracts/sessions';
import type { Ethnicity } from '../session-labels';
import { siteTimeErrorText, siteTimeValidator } from '../site-time-validator';
import { zonedLocalToInstant } from '../zoned-time';

/** Longest code the contract accepts (subject, visit, timepoint, technician). */
const CODE_MAX_LENGTH = 64;
const DEVICE_TEXT_MAX_LENGTH = 100;

/** The register form: one control per field of {@link RegisterSession}, flat for the template. */
export function buildRegistrationForm(fb: NonNullableFormBuilder, timeZone: () => string | undefined) {
  const { ageYears, heightCm, weightKg } = DEMOGRAPHIC_LIMITS;
  const code = [Validators.required, Validators.maxLength(CODE_MAX_LENGTH)];
  const deviceText = [Validators.maxLength(DEVICE_TEXT_MAX_LENGTH)];
  return fb.group({
    subjectCode: fb.control('', Validators.required),
    visitCode: fb.control('', Validators.required),
    timepointCode: fb.control('', Validators.required),
    bronchodilator: fb.control<'pre' | 'post' | ''>('', Validators.required),
    testedAt: fb.control('', [Validators.required, siteTimeValidator(timeZone)]),
    ageYears: fb.control<number | null>(null, [Validators.required, Validators.min(ageYears.min), Validators.max(ageYears.max)]),
    heightCm: fb.control<number | null>(null, [Validators.required, Validators.min(heightCm.min), Validators.max(heightCm.max)]),
    weightKg: fb.control<number | null>(null, [Validators.min(weightKg.min), Validators.max(weightKg.max)]),
    sex: fb.control<'female' | 'male' | ''>('', Validators.required),
    ethnicity: fb.control<Ethnicity | ''>(''),
    technicianCode: fb.control('', code),
    deviceManufacturer: fb.control('', deviceText),
    deviceModel: fb.control('', deviceText),
    deviceSerialNumber: fb.control('', deviceText),
  });
}

export type RegistrationForm = ReturnType<typeof buildRegistrationForm>;
export type RegistrationValue = ReturnType<RegistrationForm['getRawValue']>;

/** The request body for a valid form; null when a required part is still missing. */
export function toRegisterSession(value: RegistrationValue, timeZone: string): RegisterSession | null {
  const testedAt = zonedLocalToInstant(value.testedAt, timeZone);
  if (!testedAt.ok || !value.bronchodilator || !value.sex || value.ageYears === null || value.heightCm === null) {
    return null;
  }
  const device = {
    manufacturer: value.deviceManufacturer.trim() || undefined,
    model: value.deviceModel.trim() || undefined,
    serialNumber: value.deviceSerialNumber.trim() || undefined,
  };
  return {
    subjectCode: value.subjectCode,
    visitCode: value.visitCode,
    timepointCode: value.timepointCode,
    bronchodilator: value.bronchodilator,
    testedAt: testedAt.iso,
    demographics: {
      ageYears: value.ageYears,
      heightCm: value.heightCm,
      weightKg: value.weightKg,
      sex: value.sex,
      ethnicity: value.ethnicity || null,
    },
    technicianCode: value.technicianCode.trim(),
    device: Object.values(device).some((text) => text !== undefined) ? device : undefined,
  };
}

/** Name and unit of each field, and what to ask for when it is empty, for messages that say which field. */
const FIELD_WORDS: Readonly<Record<string, { readonly name: string; readonly unit?: string; readonly missing?: string }>> = {
  subjectCode: { name: 'subject', missing: 'Choose the subject, or enrol a new one.' },
  visitCode: { name: 'visit', missing: 'Choose the visit.' },
  timepointCode: { name: 'timepoint', missing: 'Choose the timepoint.' },
  bronchodilator: { name: 'bronchodilator', missing: 'Say whether the test was before or after the bronchodilator.' },
  testedAt: { name: 'date and time of the test' },
  ageYears: { name: 'age', unit: 'years' },
  heightCm: { name: 'height', unit: 'cm' },
  weightKg: { name: 'weight', unit: 'kg' },
  sex: { name: 'sex' },
  technicianCode: { name: 'technician code' },
  deviceManufacturer: { name: 'manufacturer' },
  deviceModel: { name: 'model' },
  deviceSerialNumber: { name: 'serial number' },
};

/** The first problem of a field in words, or '' when it has none. */
export function registrationFieldError(field: keyof RegistrationValue, errors: ValidationErrors | null): string {
  if (!errors) return '';
  const { name, unit = '', missing = `Give the ${name}.` } = FIELD_WORDS[field] ?? { name: field };
  if (errors['required']) return missing;
  if (errors['min'] || errors['max']) {
    const limits = DEMOGRAPHIC_LIMITS[field as keyof typeof DEMOGRAPHIC_LIMITS];
    const entered = String((errors['min'] ?? errors['max']).actual);
    return limits
      ? `${entered} ${unit} is outside the plausible ${name} of ${limits.min}-${limits.max} ${unit}. Check the unit.`
      : `The ${name} is out of range.`;
  }
  if (errors['maxlength']) return `The ${name} can be at most ${errors['maxlength'].requiredLength} characters.`;
  const timeProblem = siteTimeErrorText(errors);
  if (timeProblem) return timeProblem;
  return `Check the ${name}.`;
}
