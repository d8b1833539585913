import type { AbstractControl, ValidationErrors } from '@angular/forms';

import { ApiError } from '../../core/http/api-error';

/** One problem of a 400 `invalid-input` answer: the field path and the server's words. */
interface InputIssue {
  readonly path: readonly (string | number)[];
  readonly message: string;
}

function issuesOf(error: ApiError): InputIssue[] {
  const details = error.details as { issues?: unknown } | undefined;
  if (error.code !== 'invalid-input' || !Array.isArray(details?.issues)) return [];
  return details.issues.filter(
    (issue): issue is InputIssue => typeof issue?.message === 'string' && Array.isArray(issue?.path) && issue.path.length > 0,
  );
}

/**
 * Puts the field problems of a 400 `invalid-input` answer on the matching controls of `form` (as
 * the `server` error, so templates show the server's own words) and marks them touched. Returns
 * how many problems found a control; the others are for the page's general message.
 */
export function showServerFieldErrors(form: AbstractControl, error: unknown): number {
  if (!(error instanceof ApiError)) return 0;
  let placed = 0;
  for (const issue of issuesOf(error)) {
    const control = form.get(issue.path.map(String));
    if (!control) continue;
    control.setErrors({ ...(control.errors ?? {}), server: issue.message });
    control.markAsTouched();
    placed++;
  }
  return placed;
}

/** The words for the first error of a control: the server's, or those for the common validators. */
export function fieldErrorText(errors: ValidationErrors | null | undefined, label: string): string {
  if (!errors) return '';
  if (typeof errors['server'] === 'string') return errors['server'];
  if (errors['required']) return `Give the ${label}.`;
  if (errors['maxlength']) return `The ${label} has at most ${errors['maxlength'].requiredLength} characters.`;
  if (errors['pattern']) return `The ${label} has characters that are not allowed here.`;
  if (errors['min']) return `The ${label} is at least ${errors['min'].min}.`;
  if (errors['max']) return `The ${label} is at most ${errors['max'].max}.`;
  if (errors['email']) return 'Give a valid e-mail address.';
  return `Check the ${label}.`;
}
