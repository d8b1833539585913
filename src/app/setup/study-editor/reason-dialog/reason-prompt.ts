import { Injectable, inject } from '@angular/core';
import { MatDialog } from '@angular/material/dialog';
import { EMPTY, catchError, switchMap, throwError, type Observable } from 'rxjs';

import { ApiError } from '../../../core/http/api-error';
import { ReasonDialog, type ReasonDialogData } from './reason-dialog';

/**
 * Sends setup writes; when the server answers 400 `reason-required` (the study already has data),
 * asks the person for a reason with the server's own words and sends the change again with it.
 */
@Injectable({ providedIn: 'root' })
export class ReasonPrompt {
  private readonly dialog = inject(MatDialog);

  /**
   * Emits the result of `send`, or completes without a value when the person cancels the reason
   * dialog. Every other error reaches the caller unchanged.
   */
  send<T>(send: (reason: string | undefined) => Observable<T>): Observable<T> {
    return send(undefined).pipe(
      catchError((error: unknown) => {
        if (!(error instanceof ApiError) || error.code !== 'reason-required') return throwError(() => error);
        return this.ask({ title: 'Reason for the change', message: error.message, confirmLabel: 'Save with this reason' }).pipe(
          switchMap((reason) => (reason ? send(reason) : EMPTY)),
        );
      }),
    );
  }

  /** Opens the reason dialog; emits the reason, or undefined when cancelled. */
  ask(data: ReasonDialogData): Observable<string | undefined> {
    return this.dialog.open<ReasonDialog, ReasonDialogData, string>(ReasonDialog, { data, width: '34rem' }).afterClosed();
  }
}
