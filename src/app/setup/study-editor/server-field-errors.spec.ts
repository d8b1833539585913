import { describe, expect, it } from '@jest/globals';
import { FormArray, FormControl, FormGroup } from '@angular/forms';

import { ApiError } from '../../core/http/api-error';
import { fieldErrorText, showServerFieldErrors } from './server-field-errors';

function scheduleForm() {
  return new FormGroup({
    visits: new FormArray([new FormGroup({ code: new FormControl('SCR'), windowBeforeDays: new FormControl(-1) })]),
    reason: new FormControl(''),
  });
}

function invalidInput(issues: unknown[]): ApiError {
  return new ApiError(400, 'invalid-input', 'Invalid body', undefined, { issues });
}

describe('showServerFieldErrors', () => {
  it('puts each issue on the control its path names, nested in arrays too', () => {
    const form = scheduleForm();
    const placed = showServerFieldErrors(
      form,
      invalidInput([
        { path: ['visits', 0, 'windowBeforeDays'], message: 'a window cannot be negative' },
        { path: ['visits', 3, 'code'], message: 'no such row' },
        { path: [], message: 'the whole body' },
      ]),
    );
    expect(placed).toBe(1);
    const control = form.get(['visits', '0', 'windowBeforeDays'])!;
    expect(control.errors).toEqual({ server: 'a window cannot be negative' });
    expect(control.touched).toBe(true);
  });

  it.each([
    ['another error code', new ApiError(409, 'study-code-taken', 'taken')],
    ['an invalid-input without issues', new ApiError(400, 'invalid-input', 'Invalid body')],
    ['something that is not an ApiError', new Error('boom')],
  ])('places nothing for %s', (_label, error) => {
    const form = scheduleForm();
    expect(showServerFieldErrors(form, error)).toBe(0);
    expect(form.get(['visits', '0', 'windowBeforeDays'])!.errors).toBeNull();
  });
});

describe('fieldErrorText', () => {
  it.each([
    [{ server: 'the server says so' }, 'the server says so'],
    [{ required: true }, 'Give the site name.'],
    [{ maxlength: { requiredLength: 16, actualLength: 20 } }, 'The site name has at most 16 characters.'],
    [{ min: { min: 1, actual: 0 } }, 'The site name is at least 1.'],
    [{ max: { max: 720, actual: 900 } }, 'The site name is at most 720.'],
    [null, ''],
  ])('%j reads "%s"', (errors, text) => {
    expect(fieldErrorText(errors, 'site name')).toBe(text);
  });
});
