import { ErrorHandler, Injectable, Injector, inject } from '@angular/core';
import { MatSnackBar } from '@angular/material/snack-bar';

import { ApiError } from '../http/api-error';

const UNEXPECTED_MESSAGE =
  'Something unexpected went wrong. Reload the page; if it happens again, tell your study admin.';

/**
 * The app's one handler for errors nobody expected: logs each once and tells the user briefly.
 * Expected failures (an {@link ApiError} a page can explain) are handled where they happen.
 */
@Injectable()
export class AppErrorHandler implements ErrorHandler {
  private readonly injector = inject(Injector);
  /** The same error can arrive twice (e.g. rejected promise and global listener). */
  private readonly reported = new WeakSet<object>();

  handleError(error: unknown): void {
    if (typeof error === 'object' && error !== null) {
      if (this.reported.has(error)) return;
      this.reported.add(error);
    }
    console.error('Tidemark: unexpected error', error);
    this.showNotice(error);
  }

  private showNotice(error: unknown): void {
    const message = error instanceof ApiError ? error.message : UNEXPECTED_MESSAGE;
    const reference = error instanceof ApiError && error.requestId ? ` (reference ${error.requestId})` : '';
    // Looked up lazily: the handler is built before the overlay services it would otherwise need.
    this.injector.get(MatSnackBar).open(`${message}${reference}`, 'Dismiss', { duration: 10000 });
  }
}
