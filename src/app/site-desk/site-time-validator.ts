import type { AbstractControl, ValidationErrors, ValidatorFn } from '@angular/forms';

import { zonedLocalToInstant } from './zoned-time';

/** Clocks at a site and on the server may differ a little; a time "a few minutes ahead" is allowed. */
const CLOCK_SLACK_MS = 5 * 60_000;

/**
 * Checks a `datetime-local` value as a wall-clock time at the site: readable, shown by the site's
 * clocks (not skipped by a daylight-saving change), and not in the future.
 */
export function siteTimeValidator(timeZone: () => string | undefined, now: () => Date = () => new Date()): ValidatorFn {
  return (control: AbstractControl<string>): ValidationErrors | null => {
    const zone = timeZone();
    if (!control.value || !zone) return null;
    const instant = zonedLocalToInstant(control.value, zone);
    if (!instant.ok) return instant.problem === 'skipped' ? { skippedTime: { timeZone: zone } } : { malformedTime: true };
    return new Date(instant.iso).getTime() > now().getTime() + CLOCK_SLACK_MS ? { futureTime: true } : null;
  };
}

/** The problem {@link siteTimeValidator} found, in words; '' when it found none. */
export function siteTimeErrorText(errors: ValidationErrors | null): string {
  if (errors?.['skippedTime']) {
    return `This time did not exist at the site: the clocks in ${errors['skippedTime'].timeZone} skipped it for summer time.`;
  }
  if (errors?.['malformedTime']) return 'Give a full date and time.';
  if (errors?.['futureTime']) return 'This time is in the future on the site clock. Check the date.';
  return '';
}
