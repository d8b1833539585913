import { DestroyRef, inject, signal } from '@angular/core';
import { takeUntilDestroyed } from '@angular/core/rxjs-interop';
import type { AbstractControl } from '@angular/forms';
import { finalize, type Observable } from 'rxjs';

import { ApiError } from '../../core/http/api-error';
import { ReasonPrompt } from './reason-dialog/reason-prompt';
import { showServerFieldErrors } from './server-field-errors';

/**
 * How one setup form sends its changes: through the reason prompt (a study with data asks why),
 * with a saving flag, the saved and problem messages, and the server's field problems put on the
 * form's own controls. Create it in a field initializer (it injects).
 */
export class SetupFormWrite {
  /** Whether a change is being sent. */
  readonly saving = signal(false);
  /** The last success, in words. */
  readonly saved = signal('');
  /** The last refusal, in the server's words. */
  readonly problem = signal('');

  private readonly prompt = inject(ReasonPrompt);
  private readonly destroyRef = inject(DestroyRef);

  constructor(private readonly form: AbstractControl) {}

  /** Sends a change; `done` runs with the server's answer, unless the person cancelled the reason. */
  send<T>(send: (reason: string | undefined) => Observable<T>, done: (result: T) => void): void {
    this.clear();
    this.saving.set(true);
    this.prompt
      .send(send)
      .pipe(
        finalize(() => this.saving.set(false)),
        takeUntilDestroyed(this.destroyRef),
      )
      .subscribe({
        next: done,
        error: (error: unknown) => {
          // ApiError: the server refused the change and says why; anything else is unexpected.
          if (!(error instanceof ApiError)) throw error;
          showServerFieldErrors(this.form, error);
          this.problem.set(error.message);
        },
      });
  }

  clear(): void {
    this.problem.set('');
    this.saved.set('');
  }
}
